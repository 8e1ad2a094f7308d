// Requests an attacker or a careless client sends. Each is answered 4xx (never 5xx), stores
// nothing it should not, and leaves the service answering everyone else.
import { and, eq, sql } from "drizzle-orm";
import { randomUUID } from "node:crypto";
import { connect } from "node:net";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { member, organisation, organisationSigningKey } from "~/.server/db/schema";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { createTeam, createTestFleet, createUser, uniqueSuffix } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, get, postForm, postJson, signIn } from "../support/http";

afterAll(closeDb);

/** Send raw bytes to the app and read what comes back (the status line, or "" when cut off). */
function rawRequest(bytes: string, url = APP_URL): Promise<string> {
  const { hostname, port } = new URL(url);
  return new Promise((resolve) => {
    const socket = connect(Number(port), hostname);
    let answer = "";
    socket.setTimeout(5000, () => socket.destroy());
    socket.on("data", (chunk) => (answer += chunk.toString("latin1")));
    socket.on("close", () => resolve(answer.split("\r\n")[0] ?? ""));
    socket.on("error", () => resolve(answer.split("\r\n")[0] ?? ""));
    socket.write(bytes, "latin1");
    setTimeout(() => socket.end(), 300);
  });
}

async function stillAnswers() {
  const response = await fetch(`${APP_URL}/`);
  expect(response.status).toBe(200);
}

describe("1. no request stops the service", () => {
  it.each([
    ["a Host header with a space", "GET / HTTP/1.1\r\nHost: a b\r\nConnection: close\r\n\r\n"],
    ["a Host header that is a URL", "GET / HTTP/1.1\r\nHost: http://x/y\r\nConnection: close\r\n\r\n"],
    ["an empty Host header", "GET / HTTP/1.1\r\nHost: \r\nConnection: close\r\n\r\n"],
    ["an absolute-form target", "GET http://evil.example/ HTTP/1.1\r\nHost: evil.example\r\nConnection: close\r\n\r\n"],
    ["a protocol-relative target", "GET //evil.example/x HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n"],
    ["an asterisk target", "OPTIONS * HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n"],
    ["a malformed request line", "GARBAGE\r\n\r\n"],
    ["a malformed percent escape", "GET /%ZZ%E0%A4%A HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n"],
    ["a header without a colon", "GET / HTTP/1.1\r\nHost: x\r\nNoColonHere\r\nConnection: close\r\n\r\n"],
    ["a device path with a hostile Host", "POST /api/v1/device/digests HTTP/1.1\r\nHost: a b\r\nContent-Length: 2\r\nConnection: close\r\n\r\n{}"],
    ["a body shorter than it claims", "POST /sign-in HTTP/1.1\r\nHost: x\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: 100\r\nConnection: close\r\n\r\nemail=a"],
  ])("answers %s with 4xx and keeps serving", async (_name, bytes) => {
    const status = await rawRequest(bytes);
    if (status) expect(status).toMatch(/^HTTP\/1\.1 4\d\d/);
    await stillAnswers();
  });

  it("refuses a page post larger than any route reads, declared or streamed, with 413", async () => {
    const declared = await rawRequest(`POST /sign-in HTTP/1.1\r\nHost: x\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: ${20 * 1024 * 1024}\r\nConnection: close\r\n\r\nemail=`);
    expect(declared).toMatch(/^HTTP\/1\.1 413/);
    // Chunked, with no length given: read up to the ceiling, then refused.
    const chunk = new Uint8Array(1024 * 1024).fill(97);
    let sent = 0;
    const body = new ReadableStream<Uint8Array>({
      pull(controller) {
        if (sent++ < 20) controller.enqueue(chunk);
        else controller.close();
      },
    });
    const streamed = await fetch(`${APP_URL}/sign-in`, { method: "POST", headers: { "content-type": "application/x-www-form-urlencoded", origin: APP_URL }, body, duplex: "half" } as RequestInit).catch(() => null);
    if (streamed) expect(streamed.status).toBe(413);
    await stillAnswers();
  });

  it("builds URLs from its own origin, never from the Host header", async () => {
    const response = await fetch(`${APP_URL}/o/corvid`, { redirect: "manual", headers: { host: "evil.example" } });
    expect(response.status).toBe(302);
    expect(response.headers.get("location")).not.toContain("evil.example");
    await stillAnswers();
  });
});

describe("2. one device cannot fail another tenant's devices", () => {
  let good: DeviceClient[];
  let poisoner: DeviceClient;

  beforeAll(async () => {
    const a = await createTeam(db(), ["owner"]);
    const b = await createTeam(db(), ["owner"]);
    const fleetA = await createTestFleet(db(), { organisationId: a.organisation.id, machinesPerSite: 1 });
    const fleetB = await createTestFleet(db(), { organisationId: b.organisation.id, machinesPerSite: 5 });
    poisoner = new DeviceClient(APP_URL, await createDeviceIdentity());
    expect((await poisoner.enrol(fleetA.machines[0].enrolmentCode)).status).toBe(201);
    good = [];
    for (const m of fleetB.machines) {
      const client = new DeviceClient(APP_URL, await createDeviceIdentity());
      expect((await client.enrol(m.enrolmentCode)).status).toBe(201);
      good.push(client);
    }
  });

  it("a digest whose time has a +23:59 offset, in flight beside 20 good posts of another organisation", async () => {
    const start = new Date(Date.now() - 10 * 60_000);
    const local = new Date(start.getTime() + (23 * 60 + 59) * 60_000).toISOString().replace("Z", "+23:59");
    const localEnd = new Date(start.getTime() + (23 * 60 + 60) * 60_000).toISOString().replace("Z", "+23:59");
    const poisoned = { ...sampleDigest("temp", 1, start), windowStart: local, windowEnd: localEnd };
    const goodPosts = good.flatMap((client, i) => [client.postDigests([sampleDigest("temp", 100 + i, start)]), client.postDigests([sampleDigest("speed", 100 + i, start)])]);
    const [poison, ...rest] = await Promise.all([poisoner.postDigests([poisoned]), ...goodPosts]);
    expect(rest).toHaveLength(20);
    for (const response of rest) expect(response.status).toBe(200);
    expect(poison.status).toBeLessThan(500);
    // Normalised to UTC, the window is the same instant and is stored as such.
    expect(await poison.json()).toEqual({ accepted: 1, duplicates: 0, rejected: [] });
  });

  it("a token whose jti holds a NUL, beside 20 good posts: refused 401, the others stored", async () => {
    const start = new Date(Date.now() - 20 * 60_000);
    const nul = await poisoner.token({ jti: "abcdefgh\u0000ijkl" });
    const goodPosts = good.flatMap((client, i) => [client.postDigests([sampleDigest("temp", 200 + i, start)]), client.postDigests([sampleDigest("speed", 200 + i, start)])]);
    const [poison, ...rest] = await Promise.all([poisoner.postDigests([sampleDigest("temp", 2, start)], nul), ...goodPosts]);
    for (const response of rest) expect(response.status).toBe(200);
    expect(poison.status).toBe(401);
    expect((await poison.json()).error.code).toBe("bad_jti");
    // The same token on config and ack is refused the same way.
    expect((await poisoner.getConfig(undefined, nul)).status).toBe(401);
    expect((await poisoner.ack({ loop: "temp", version: 1, status: "applied" }, nul)).status).toBe(401);
  });

  it.each(["short", "has space in it", "quote'inside", "a".repeat(129), "comma,and{brace}"])("refuses the jti %j", async (jti) => {
    const response = await poisoner.postDigests([sampleDigest("temp", 3, new Date(Date.now() - 60_000))], await poisoner.token({ jti }));
    expect(response.status).toBe(401);
  });
});

describe("4. no open redirect after sign-in", () => {
  let email: string;
  beforeAll(async () => {
    email = `redirect-${uniqueSuffix()}@example.com`;
    await createUser(db(), { email, name: "Redirect Tester", password: "redirect-password" });
  });

  it.each(["//evil.example", "/\\evil.example", "/\t/evil.example", "/%09/evil.example", "/%5Cevil.example", "https://evil.example", "javascript:alert(1)", "/.//evil.example", "\\\\evil.example"])(
    "signs in with next=%j and stays on our origin",
    async (next) => {
      const response = await postForm("/sign-in", { email, password: "redirect-password", next });
      expect(response.status).toBe(302);
      const location = response.headers.get("location")!;
      const resolved = new URL(location, APP_URL);
      expect(resolved.origin).toBe(APP_URL);
      expect(location.startsWith("//")).toBe(false);
    },
  );

  it("the page's own link keeps the tricky value away from the redirect when signed in", async () => {
    const session = await signIn(email, "redirect-password");
    const response = await get(`/sign-in?next=${encodeURIComponent("/\t/evil.example")}`, session);
    expect(response.status).toBe(302);
    expect(response.headers.get("location")).toBe("/");
  });
});

describe("5. site managers read only their own sites' part of the registry", () => {
  it("refuses models and loop templates to a site manager, as a page and through the API", async () => {
    const manager = await signIn("manager@halden.example");
    const api = await get("/api/v1/o/corvid/models", manager);
    expect(api.status).toBe(403);
    const page = await get("/o/corvid/models", manager);
    expect(page.status).toBe(403);
    // A viewer still reads them.
    expect((await get("/api/v1/o/corvid/models", await signIn("viewer@corvid.example"))).status).toBe(200);
  });

  it("names only the models and counts only the sites the manager holds", async () => {
    const manager = await signIn("manager@halden.example");
    const customers = await (await get("/api/v1/o/corvid/customers", manager)).json();
    expect(customers.items.map((c: { name: string }) => c.name)).toEqual(["Halden Plastics"]);
    const siteCount = await db().execute<{ n: number }>(sql`
      select count(*)::int as n from site_assignment sa join member m on m.id = sa.member_id join "user" u on u.id = m.user_id
      where u.email = 'manager@halden.example'`);
    expect(customers.items[0].siteCount).toBe(Number(siteCount.rows[0].n));
    expect(customers.items[0].siteCount).toBeGreaterThan(0);
    // The engineer sees every site of every customer, and each site's machines.
    const engineer = await signIn("engineer@corvid.example");
    const all = await (await get("/api/v1/o/corvid/customers", engineer)).json();
    expect(all.items.find((c: { name: string }) => c.name === "Halden Plastics").siteCount).toBe(2);
    const sites = await (await get("/api/v1/o/corvid/sites", engineer)).json();
    expect(sites.items.every((s: { machineCount: number }) => s.machineCount > 0)).toBe(true);
    const models = await (await get("/api/v1/o/corvid/models", engineer)).json();
    expect(models.items[0].machineCount).toBeGreaterThanOrEqual(48);

    // A model that no Halden site runs never appears in the manager's filter options.
    const [corvid] = await db().select().from(organisation).where(eq(organisation.slug, "corvid"));
    const hidden = `Hidden model ${uniqueSuffix()}`;
    await db().execute(sql`insert into machine_model (organisation_id, name) values (${corvid.id}, ${hidden})`);
    const page = await (await get("/o/corvid/machines", manager)).text();
    expect(page).not.toContain(hidden);
    const engineerPage = await (await get("/o/corvid/machines", await signIn("engineer@corvid.example"))).text();
    expect(engineerPage).toContain(hidden);
    await db().execute(sql`delete from machine_model where organisation_id = ${corvid.id} and name = ${hidden}`);
  });
});

describe("6. better-auth's own endpoints do not get around the role table", () => {
  it.each([
    ["GET", "/api/auth/organization/get-full-organization?organizationSlug=corvid"],
    ["GET", "/api/auth/organization/list-members?organizationSlug=corvid"],
    ["GET", "/api/auth/organization/list"],
    ["POST", "/api/auth/organization/update"],
    ["POST", "/api/auth/organization/set-active"],
    ["POST", "/api/auth/organization/invite-member"],
    ["POST", "/api/auth/organization/update-member-role"],
    ["POST", "/api/auth/organization/remove-member"],
    ["POST", "/api/auth/organization/delete"],
    ["POST", "/api/auth/sign-up/email"],
    ["POST", "/api/auth/change-email"],
    ["POST", "/api/auth/update-user"],
    ["GET", "/api/auth/list-sessions"],
  ])("%s %s is not there (404) for a site manager or an admin", async (method, path) => {
    for (const who of ["manager@halden.example", "admin@corvid.example"]) {
      const session = await signIn(who);
      const response =
        method === "GET"
          ? await get(path, session)
          : await postJson(path, { organizationSlug: "corvid", organizationId: "x", data: { slug: "renamed" }, email: "x@example.com" }, session);
      expect(response.status, `${who} ${path}`).toBe(404);
      const body = await response.text();
      expect(body).not.toContain("@corvid.example");
    }
  });

  it("keeps the slug fixed even against a direct update", async () => {
    const [corvid] = await db().select().from(organisation).where(eq(organisation.slug, "corvid"));
    await expect(db().update(organisation).set({ slug: "corvid-renamed" }).where(eq(organisation.id, corvid.id))).rejects.toThrow();
    const [after] = await db().select().from(organisation).where(eq(organisation.id, corvid.id));
    expect(after.slug).toBe("corvid");
    // The name may still change.
    await db().update(organisation).set({ name: corvid.name }).where(eq(organisation.id, corvid.id));
  });
});

describe("7. smaller ones", () => {
  it("stores every organisation's signing private key encrypted", async () => {
    const rows = await db().select({ privateJwk: organisationSigningKey.privateJwk }).from(organisationSigningKey);
    expect(rows.length).toBeGreaterThan(1);
    for (const row of rows) {
      expect(row.privateJwk).toMatchObject({ enc: "A256GCM" });
      expect(row.privateJwk).not.toHaveProperty("d");
      expect(JSON.stringify(row.privateJwk)).not.toContain('"d"');
    }
  });

  it("sets security headers on documents, APIs and files, with a nonce instead of inline scripts", async () => {
    const page = await fetch(`${APP_URL}/sign-in`);
    const csp = page.headers.get("content-security-policy")!;
    expect(csp).toMatch(/script-src 'self' 'nonce-[A-Za-z0-9+/=]+'/);
    expect(csp).not.toMatch(/script-src[^;]*unsafe-inline/);
    expect(csp).toContain("frame-ancestors 'none'");
    const nonce = /'nonce-([^']+)'/.exec(csp)![1];
    const html = await page.text();
    const scripts = [...html.matchAll(/<script\b[^>]*>/g)].map((m) => m[0]);
    expect(scripts.length).toBeGreaterThan(0);
    for (const tag of scripts) expect(tag).toContain(`nonce="${nonce}"`);
    for (const response of [page, await fetch(`${APP_URL}/api/v1/openapi.json`), await fetch(`${APP_URL}/favicon.svg`), await fetch(`${APP_URL}/api/v1/device/config`)]) {
      expect(response.headers.get("x-content-type-options")).toBe("nosniff");
      expect(response.headers.get("referrer-policy")).toBe("no-referrer");
      expect(response.headers.get("content-security-policy")).toContain("frame-ancestors 'none'");
    }
    // A second document gets a different nonce.
    const again = (await fetch(`${APP_URL}/sign-in`)).headers.get("content-security-policy")!;
    expect(again).not.toBe(csp);
  });

  it("creates no signing key when the JWKS of an organisation without one is read", async () => {
    const id = randomUUID();
    const slug = `keyless-${uniqueSuffix()}`;
    await db().insert(organisation).values({ id, name: "Keyless", slug });
    const response = await fetch(`${APP_URL}/api/v1/o/${slug}/jwks.json`);
    expect(response.status).toBe(200);
    expect((await response.json()).keys).toEqual([]);
    const keys = await db().select().from(organisationSigningKey).where(eq(organisationSigningKey.organisationId, id));
    expect(keys).toHaveLength(0);
  });

  it("checks the device token before reading the body, and reads no more than the route allows", async () => {
    const big = JSON.stringify({ digests: [{ pad: "x".repeat(300 * 1024) }] });
    // No token: 401, whatever the body.
    const unauthenticated = await fetch(`${APP_URL}/api/v1/device/digests`, { method: "POST", headers: { "content-type": "application/json", authorization: `Bearer ${"a".repeat(20)}.${"b".repeat(20)}.${"c".repeat(20)}` }, body: JSON.stringify({ digests: [] }) });
    expect(unauthenticated.status).toBe(401);
    const ack = await fetch(`${APP_URL}/api/v1/device/config/ack`, { method: "POST", headers: { "content-type": "application/json" }, body: big });
    expect(ack.status).toBe(401);
    // A declared 64 MiB body is refused without being read.
    const declared = await rawRequest(`POST /api/v1/device/digests HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\nContent-Length: ${64 * 1024 * 1024}\r\nConnection: close\r\n\r\n{`);
    expect(declared).toMatch(/^HTTP\/1\.1 413/);
    await stillAnswers();
  });

  it("refuses an API token once it has expired, or its creator has left or lost the capability", async () => {
    const team = await createTeam(db(), ["owner", "admin"]);
    const [owner, admin] = team.people;
    const create = async (who: typeof owner, fields: Record<string, string>) => {
      const session = await signIn(who.email, who.password);
      const response = await postForm(`/o/${team.organisation.slug}/developer`, { intent: "create-token", name: `t ${uniqueSuffix()}`, scope: "read", ...fields }, session);
      expect(response.status).toBe(200);
      return /fbk_[A-Za-z0-9_-]{43}/.exec(await response.text())![0];
    };
    const call = (secret: string) => fetch(`${APP_URL}/api/v1/o/${team.organisation.slug}/machines`, { headers: { authorization: `Bearer ${secret}` } });

    const expiring = await create(owner, { expiresInDays: "1" });
    expect((await call(expiring)).status).toBe(200);
    await db().execute(sql`update api_token set expires_at = now() - interval '1 second' where organisation_id = ${team.organisation.id} and prefix = ${expiring.slice(4, 12)}`);
    expect((await call(expiring)).status).toBe(401);
    expect((await postForm(`/o/${team.organisation.slug}/developer`, { intent: "create-token", name: "bad", scope: "read", expiresInDays: "-3" }, await signIn(owner.email, owner.password))).status).toBe(400);

    const admins = await create(admin, {});
    expect((await call(admins)).status).toBe(200);
    await db().update(member).set({ role: "engineer" }).where(and(eq(member.organizationId, team.organisation.id), eq(member.id, admin.memberId)));
    expect((await call(admins)).status).toBe(401);
    await db().update(member).set({ role: "admin" }).where(eq(member.id, admin.memberId));
    expect((await call(admins)).status).toBe(200);
    await db().delete(member).where(eq(member.id, admin.memberId));
    expect((await call(admins)).status).toBe(401);
  });
});
