import { expect, test } from "@playwright/test";
import { and, asc, eq } from "drizzle-orm";
import { gainSet, loopTemplate, machine, organisation, release, user } from "~/.server/db/schema";
import { issueEnrolmentCode } from "~/.server/fleet/enrolment-codes";
import { advanceRelease } from "~/.server/releases/releases";
import { syncConfig } from "../../scripts/simulator/config-sync";
import { pinJwks, type PinnedJwks } from "../../scripts/simulator/config-verifier";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { closeDb, db } from "../support/db";
import { APP_URL } from "../support/http";
import { signInAs } from "./support";

// A release in the browser: an engineer starts one to a pilot of 2 machines, the simulator's
// device code pulls, verifies, applies and acknowledges, the release widens after its guard and
// every target shows applied. Then a release whose pilot loops get worse holds itself.
// The job step (release.advance) is called directly, as the worker would each minute.

type Device = { client: DeviceClient; pin: PinnedJwks; applied: Map<string, number>; etag?: string; machineId: string };
const devices = new Map<string, Device>();
let organisationId: string;
let machines: { id: string; serial: string }[];

async function deviceFor(machineId: string): Promise<Device> {
  let d = devices.get(machineId);
  if (d) return d;
  const { code } = await issueEnrolmentCode(db(), { organisationId, machineId, actor: "system" });
  const client = new DeviceClient(APP_URL, await createDeviceIdentity("EdDSA"));
  const response = await client.enrol(code, "sim-1.0");
  expect(response.status).toBe(201);
  const { jwksUrl } = await response.json();
  d = { client, pin: await pinJwks(new URL(jwksUrl, APP_URL).href), applied: new Map(), machineId };
  devices.set(machineId, d);
  return d;
}

const sync = async (machineId: string) => syncConfig((await deviceFor(machineId)).client, (await deviceFor(machineId)), () => undefined);

async function approvedSet(templateKey: string, gains: { kp: number; ki: number; kd: number }) {
  const [template] = await db().select().from(loopTemplate).where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.key, templateKey)));
  const [author] = await db().select({ id: user.id }).from(user).where(eq(user.email, "engineer@corvid.example"));
  const [approver] = await db().select({ id: user.id }).from(user).where(eq(user.email, "engineer2@corvid.example"));
  const existing = await db().select({ version: gainSet.version }).from(gainSet).where(eq(gainSet.loopTemplateId, template.id));
  const [row] = await db()
    .insert(gainSet)
    .values({ organisationId, loopTemplateId: template.id, version: Math.max(0, ...existing.map((e) => e.version)) + 1, state: "approved", gains, origin: { rule: null, controller: null, model: null, figures: {} }, createdBy: author.id, proposedBy: author.id, decidedBy: approver.id })
    .returning({ id: gainSet.id });
  return { id: row.id, templateId: template.id };
}

test.beforeAll(async () => {
  const [org] = await db().select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, "corvid"));
  organisationId = org.id;
  machines = await db().select({ id: machine.id, serial: machine.serial }).from(machine).where(and(eq(machine.organisationId, organisationId), eq(machine.status, "active"))).orderBy(asc(machine.serial));
});
test.afterAll(closeDb);

test("an engineer releases to a pilot of 2 machines; devices apply; it widens after the guard and completes", async ({ page }) => {
  test.setTimeout(180_000);
  const set = await approvedSet("melt_pressure", { kp: 1.3, ki: 0.32, kd: 0 });
  await signInAs(page, "engineer@corvid.example");
  await page.goto(`/o/corvid/releases/new?gainSetId=${set.id}`);
  // A gain set alone previews every machine of the model; "Preview the target" redoes it after a change.
  await page.getByRole("button", { name: "Preview the target" }).click();
  await expect(page.getByRole("heading", { name: "2. What it reaches" })).toBeVisible();
  const pilot = page.getByRole("region", { name: "Pilot machines" });
  await pilot.getByLabel(machines[0].serial, { exact: true }).check();
  await pilot.getByLabel(machines[1].serial, { exact: true }).check();
  await page.getByLabel("Guard window").fill("1");
  await expect(page.getByTestId("live-change-caution")).toBeVisible();
  // A wrong count is refused and nothing starts.
  await page.getByLabel(/Type the number of machines/).fill(String(machines.length - 1));
  await page.getByRole("button", { name: "Start the release" }).click();
  await expect(page.getByText(/type that number to start it/)).toBeVisible();
  await page.getByLabel(/Type the number of machines/).fill(String(machines.length));
  await page.getByRole("button", { name: "Start the release" }).click();
  await expect(page).toHaveURL(/\/o\/corvid\/releases\/[0-9a-f-]{36}$/);
  const releaseId = page.url().split("/").pop()!;
  await expect(page.getByText("Piloting").first()).toBeVisible();

  // The two pilot machines' devices pull, verify against the pinned JWKS, apply and acknowledge.
  for (const m of machines.slice(0, 2)) expect((await sync(m.id)).status).toBe("done");
  await page.reload();
  await expect(page.getByRole("progressbar", { name: /Pilot \(wave 1\): 2 applied/ })).toBeVisible();

  // The guard window passes without a reason to hold: the release widens.
  const [row] = await db().select().from(release).where(eq(release.id, releaseId));
  await advanceRelease(db(), { organisationId, releaseId, now: new Date(row.guardEndsAt!.getTime() + 1000) });
  // Half of the rest answer: a release part-way through its second wave.
  const rest = machines.slice(2);
  for (const m of rest.slice(0, Math.floor(rest.length / 2))) await sync(m.id);
  await page.reload();
  await expect(page.getByText("Widening").first()).toBeVisible();
  await page.screenshot({ path: "data/screenshots/release-waves-desktop.png", fullPage: true });
  await page.setViewportSize({ width: 390, height: 844 });
  await page.screenshot({ path: "data/screenshots/release-waves-phone.png", fullPage: true });
  await page.setViewportSize({ width: 1280, height: 900 });

  for (const m of rest.slice(Math.floor(rest.length / 2))) await sync(m.id);
  await advanceRelease(db(), { organisationId, releaseId });
  await page.reload();
  await expect(page.getByText("Complete").first()).toBeVisible();
  const states = await page.getByRole("region", { name: "Loops in this release" }).locator("tbody tr td:nth-child(4)").allInnerTexts();
  expect(states).toHaveLength(machines.length);
  expect(states.every((s) => s.includes("applied"))).toBe(true);
});

test("a release whose pilot loops get worse holds itself, and the page says why", async ({ page }) => {
  test.setTimeout(120_000);
  const set = await approvedSet("zone_1", { kp: 40, ki: 2, kd: 0 });
  const pilotMachines = machines.slice(4, 6);
  // Half an hour of baseline on the pilot loops before the release.
  for (const m of pilotMachines) {
    const d = await deviceFor(m.id);
    await d.client.postDigests([20, 10].map((ago, i) => sampleDigest("zone_1", 9000 + i, new Date(Date.now() - ago * 60_000), 60, { iae: 30, gainVersion: 1 })));
  }
  await signInAs(page, "engineer@corvid.example");
  const response = await page.request.post(`/api/v1/o/corvid/releases`, {
    headers: { origin: APP_URL },
    data: { gainSetId: set.id, target: { all: true }, pilot: { machineIds: pilotMachines.map((m) => m.id) }, guard: { windowMinutes: 30 }, confirmMachineCount: machines.length },
  });
  expect(response.status()).toBe(201);
  const { id } = await response.json();
  for (const m of pilotMachines) {
    await sync(m.id);
    const d = await deviceFor(m.id);
    const version = d.applied.get("zone_1")!;
    await d.client.postDigests([sampleDigest("zone_1", 9100, new Date(Date.now() - 20_000), 60, { iae: 150, gainVersion: version, oscCount: 9 })]);
  }
  await advanceRelease(db(), { organisationId, releaseId: id });
  await page.goto(`/o/corvid/releases/${id}`);
  await expect(page.getByText("Held — waiting for a decision")).toBeVisible();
  await expect(page.getByText(/median IAE ratio/).first()).toBeVisible();
  await expect(page.getByTestId("live-change-caution").first()).toBeVisible();
  await page.screenshot({ path: "data/screenshots/release-held-desktop.png", fullPage: true });
});
