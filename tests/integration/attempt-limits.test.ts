// The attempt limits, switched on: the suite's own app runs with them off (it signs in hundreds
// of times from one address), so these tests start an instance of their own. It believes
// X-Forwarded-For from 127.0.0.1 (TRUSTED_PROXIES), which lets one test client speak for
// several addresses.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createDeviceIdentity, DeviceClient } from "../../scripts/simulator/device-client";
import { createTeam, createTestFleet, createUser, uniqueSuffix } from "../factories";
import { startAppInstance } from "../support/app-process";
import { closeDb, db } from "../support/db";

let app: { url: string; stop: () => Promise<void> };
let spoofable: { url: string; stop: () => Promise<void> };

beforeAll(async () => {
  [app, spoofable] = await Promise.all([
    startAppInstance({ FLYBALL_DISABLE_RATE_LIMIT: "", TRUSTED_PROXIES: "127.0.0.1", DEVICE_RATE_PER_SECOND: "0.01", DEVICE_RATE_BURST: "3" }),
    // No trusted proxy: X-Forwarded-For must be ignored.
    startAppInstance({ FLYBALL_DISABLE_RATE_LIMIT: "" }),
  ]);
}, 60_000);
afterAll(async () => {
  await Promise.all([app?.stop(), spoofable?.stop()]);
  await closeDb();
});

function signInJson(url: string, email: string, password: string, from: string) {
  return fetch(`${url}/api/auth/sign-in/email`, {
    method: "POST",
    headers: { "content-type": "application/json", origin: url, "x-forwarded-for": from },
    body: JSON.stringify({ email, password }),
  });
}

function signInForm(url: string, email: string, password: string, from: string) {
  return fetch(`${url}/sign-in`, {
    method: "POST",
    redirect: "manual",
    headers: { "content-type": "application/x-www-form-urlencoded", origin: url, "x-forwarded-for": from },
    body: new URLSearchParams({ email, password }).toString(),
  });
}

describe("sign-in limits", () => {
  it("slows 20 wrong passwords for one account from one address, while another account signs in from another address at the same moment", async () => {
    const victim = await createUser(db(), { email: `victim-${uniqueSuffix()}@example.com`, name: "Victim", password: "victim-password" });
    const bystander = await createUser(db(), { email: `bystander-${uniqueSuffix()}@example.com`, name: "Bystander", password: "bystander-password" });
    const guesses = Array.from({ length: 20 }, (_, i) => (i % 2 ? signInJson : signInForm)(app.url, victim.email, `guess-${i}`, "10.1.0.1"));
    const [bystanderAnswer, ...answers] = await Promise.all([signInForm(app.url, bystander.email, "bystander-password", "10.1.0.2"), ...guesses]);
    expect(bystanderAnswer.status).toBe(302);
    const statuses = answers.map((r) => r.status);
    expect(statuses.filter((s) => s === 429).length).toBeGreaterThanOrEqual(10);
    expect(statuses.every((s) => s === 401 || s === 429)).toBe(true);
    const refused = answers.find((r) => r.status === 429)!;
    expect(Number(refused.headers.get("retry-after"))).toBeGreaterThan(0);
    // Even the right password is refused from that address until the window passes...
    expect((await signInForm(app.url, victim.email, "victim-password", "10.1.0.1")).status).toBe(429);
    // ...but the owner of the account, from their own address, gets in.
    expect((await signInForm(app.url, victim.email, "victim-password", "10.1.0.3")).status).toBe(302);
  });

  it("does not let a flood from one address stop another address", async () => {
    const someone = await createUser(db(), { email: `someone-${uniqueSuffix()}@example.com`, name: "Someone", password: "someone-password" });
    const flood = await Promise.all(Array.from({ length: 40 }, (_, i) => signInForm(app.url, `nobody-${i}-${uniqueSuffix()}@example.com`, "x", "10.2.0.1")));
    expect(flood.some((r) => r.status === 429)).toBe(true);
    expect((await signInForm(app.url, someone.email, "someone-password", "10.2.0.2")).status).toBe(302);
  });

  it("ignores X-Forwarded-For from a client that is not a trusted proxy", async () => {
    const answers = [];
    for (let i = 0; i < 35; i++) answers.push((await signInForm(spoofable.url, `spoof-${i}-${uniqueSuffix()}@example.com`, "x", `10.3.0.${i}`)).status);
    expect(answers).toContain(429);
  });

  it("limits reset e-mails per account", async () => {
    const person = await createUser(db(), { email: `reset-limit-${uniqueSuffix()}@example.com`, name: "Reset", password: "reset-password-1" });
    const statuses = [];
    for (let i = 0; i < 5; i++) {
      const response = await fetch(`${app.url}/forgot-password`, {
        method: "POST",
        headers: { "content-type": "application/x-www-form-urlencoded", origin: app.url, "x-forwarded-for": `10.4.0.${i}` },
        body: new URLSearchParams({ email: person.email }).toString(),
      });
      statuses.push(response.status);
    }
    expect(statuses.slice(0, 3)).toEqual([200, 200, 200]);
    expect(statuses.slice(3)).toEqual([429, 429]);
  });
});

describe("device limits", () => {
  it("limits enrolment attempts per address", async () => {
    const statuses = [];
    for (let i = 0; i < 65; i++) {
      const response = await fetch(`${app.url}/api/v1/device/enrol`, {
        method: "POST",
        headers: { "content-type": "application/json", "x-forwarded-for": "10.5.0.1" },
        body: JSON.stringify({ enrolmentCode: `FB-WRONG-${i}-CODE`, publicKey: { kty: "OKP", crv: "Ed25519", x: "A".repeat(43) } }),
      });
      statuses.push(response.status);
    }
    expect(statuses.slice(0, 60).every((s) => s !== 429)).toBe(true);
    expect(statuses.slice(60)).toEqual([429, 429, 429, 429, 429]);
  });

  it("applies the per-device budget to config pulls and acknowledgements too", async () => {
    const team = await createTeam(db(), ["owner"]);
    const fleet = await createTestFleet(db(), { organisationId: team.organisation.id });
    const client = new DeviceClient(app.url, await createDeviceIdentity());
    expect((await client.enrol(fleet.machines[0].enrolmentCode)).status).toBe(201);
    const statuses = [];
    for (let i = 0; i < 3; i++) statuses.push((await client.getConfig()).status);
    statuses.push((await client.ack({ loop: "temp", version: 1, status: "applied" })).status);
    statuses.push((await client.getConfig()).status);
    expect(statuses.slice(0, 3)).toEqual([200, 200, 200]);
    expect(statuses.slice(3)).toEqual([429, 429]);
  });
});
