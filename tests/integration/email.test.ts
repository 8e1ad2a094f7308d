// The e-mail fake behaves like the hosted service, and the app says so when delivery fails.
import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import type { AddressInfo } from "node:net";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { user } from "~/.server/db/schema";
import { createResendFake } from "../../fakes/resend/server";
import { startAppInstance } from "../support/app-process";
import { closeDb, db } from "../support/db";
import { uniqueSuffix } from "../factories";

let fakeUrl: string;
let stopFake: () => Promise<void>;
const dataDir = mkdtempSync(path.join(tmpdir(), "flyball-mail-"));

async function startFake(dir: string) {
  const server = createResendFake({ dataDir: dir });
  await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
  const { port } = server.address() as AddressInfo;
  return { url: `http://127.0.0.1:${port}`, stop: () => new Promise<void>((r) => server.close(() => r())) };
}

beforeAll(async () => {
  const fake = await startFake(dataDir);
  fakeUrl = fake.url;
  stopFake = fake.stop;
});
afterAll(async () => {
  await stopFake();
  await closeDb();
});

function post(body: unknown, key = "re_test") {
  return fetch(`${fakeUrl}/emails`, {
    method: "POST",
    headers: { "content-type": "application/json", authorization: `Bearer ${key}` },
    body: JSON.stringify(body),
  });
}

const good = { from: "Flyball <no-reply@flyball.example>", to: ["ada@example.com"], subject: "Hello", text: "Hi" };

describe("fakes/resend", () => {
  it.each(["to", "from", "subject"] as const)("refuses a message without `%s` with 422 and an error body", async (field) => {
    const { [field]: _omitted, ...rest } = good;
    const response = await post(rest);
    expect(response.status).toBe(422);
    const body = (await response.json()) as { statusCode: number; name: string; message: string };
    expect(body.statusCode).toBe(422);
    expect(body.message).toContain(field);
  });

  it("refuses a malformed recipient and a message with neither text nor html", async () => {
    expect((await post({ ...good, to: "not-an-address" })).status).toBe(422);
    expect((await post({ from: good.from, to: good.to, subject: "x" })).status).toBe(422);
  });

  it("refuses requests without the SDK's API key", async () => {
    const response = await fetch(`${fakeUrl}/emails`, { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify(good) });
    expect(response.status).toBe(401);
  });

  it("keeps accepted messages on disk across a restart and lists them", async () => {
    const response = await post({ ...good, subject: "Survives restarts" });
    expect(response.status).toBe(200);
    const { id } = (await response.json()) as { id: string };
    await stopFake();
    const again = await startFake(dataDir);
    fakeUrl = again.url;
    stopFake = again.stop;
    const listing = (await (await fetch(`${fakeUrl}/api/messages`)).json()) as { items: { id: string; subject: string }[] };
    expect(listing.items.find((m) => m.id === id)?.subject).toBe("Survives restarts");
    const inboxPage = await (await fetch(`${fakeUrl}/`)).text();
    expect(inboxPage).toContain("Survives restarts");
    const messagePage = await (await fetch(`${fakeUrl}/messages/${id}`)).text();
    expect(messagePage).toContain("Hi");
  });
});

describe("the app when the e-mail service refuses a message", () => {
  let app: Awaited<ReturnType<typeof startAppInstance>>;
  beforeAll(async () => {
    // The fake refuses this key (403), like the hosted service refuses a bad key.
    app = await startAppInstance({ RESEND_BASE_URL: fakeUrl, RESEND_API_KEY: "wrong_key" });
  });
  afterAll(async () => app.stop());

  it("reports that the confirmation e-mail was not sent instead of claiming success", async () => {
    const email = `refused-${uniqueSuffix()}@example.com`;
    const response = await fetch(`${app.url}/sign-up`, {
      method: "POST",
      headers: { "content-type": "application/x-www-form-urlencoded", origin: app.url },
      body: new URLSearchParams({ name: "Refused Person", email, password: "long-enough-password" }),
    });
    expect(response.status).toBe(502);
    const html = await response.text();
    expect(html).toContain("The confirmation e-mail was not sent");
    expect(html).not.toContain("Confirmation e-mail sent");
    // The account exists and can ask for the link again later; nothing was lost.
    const [row] = await db().select().from(user).where(eq(user.email, email));
    expect(row?.emailVerified).toBe(false);
  });
});
