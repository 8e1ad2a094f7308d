// The management API and fleet pages over HTTP: registration, listing, isolation between
// organisations, site-manager scope, and hostile input.
import { and, asc, eq, ne, sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { auditEvent, customer, device, enrolmentCode, loop, machine, organisation, site } from "~/.server/db/schema";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { addMember, assignSite, createTeam, createTestFleet, createUser, markSubscribed, uniqueSuffix } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, get, postForm, postJson, signIn, type Session } from "../support/http";

let a: Awaited<ReturnType<typeof createTeam>>;
let b: Awaited<ReturnType<typeof createTeam>>;
let fleetA: Awaited<ReturnType<typeof createTestFleet>>;
let fleetB: Awaited<ReturnType<typeof createTestFleet>>;
let ownerA: Session;
let ownerB: Session;
let loopIdA: string;

beforeAll(async () => {
  a = await createTeam(db(), ["owner", "site_manager", "viewer"]);
  b = await createTeam(db(), ["owner"]);
  fleetA = await createTestFleet(db(), { organisationId: a.organisation.id, machinesPerSite: 3 });
  // Six machines: past the trial's five, so A pays (billing is tested in billing*.test.ts).
  await markSubscribed(db(), { organisationId: a.organisation.id });
  fleetB = await createTestFleet(db(), { organisationId: b.organisation.id, machinesPerSite: 1 });
  await assignSite(db(), { organisationId: a.organisation.id, memberId: a.people[1].memberId, siteId: fleetA.sites[0].id });
  ownerA = await signIn(a.people[0].email);
  ownerB = await signIn(b.people[0].email);
  const detail = await (await get(`/api/v1/o/${a.organisation.slug}/machines/${fleetA.machines[0].id}`, ownerA)).json();
  loopIdA = detail.machine.loops[0].id;
  // Some digests so the digest route has something to hide.
  const client = new DeviceClient(APP_URL, await createDeviceIdentity());
  await client.enrol(fleetA.machines[0].enrolmentCode);
  await client.postDigests([sampleDigest(detail.machine.loops[0].key, 1, new Date(Date.now() - 300_000))]);
});
afterAll(closeDb);

/** Everything a machine command could write: the machine, its devices, its enrolment codes, its audit rows. */
async function machineState(machineId: string) {
  return {
    machine: await db().select().from(machine).where(eq(machine.id, machineId)),
    devices: await db().select().from(device).where(eq(device.machineId, machineId)).orderBy(asc(device.id)),
    codes: await db().select().from(enrolmentCode).where(eq(enrolmentCode.machineId, machineId)).orderBy(asc(enrolmentCode.id)),
    audit: await db().select().from(auditEvent).where(eq(auditEvent.targetId, machineId)).orderBy(asc(auditEvent.id)),
  };
}

const organisationAudit = (organisationId: string) => db().select().from(auditEvent).where(eq(auditEvent.organisationId, organisationId)).orderBy(asc(auditEvent.id));

describe("registry API", () => {
  it("lists customers, sites and models with their loop templates", async () => {
    const customers = await (await get(`/api/v1/o/${a.organisation.slug}/customers`, ownerA)).json();
    expect(customers).toMatchObject({ total: 1, page: 1 });
    const sites = await (await get(`/api/v1/o/${a.organisation.slug}/sites`, ownerA)).json();
    expect(sites.items.map((s: { timeZone: string }) => s.timeZone).sort()).toEqual(["Europe/Berlin", "UTC"]);
    const models = await (await get(`/api/v1/o/${a.organisation.slug}/models`, ownerA)).json();
    expect(models.items[0].loopTemplates.map((t: { key: string }) => t.key)).toEqual(["temp", "speed"]);
    expect(models.items[0].loopTemplates[0]).toMatchObject({ unit: "°C", outputMin: 0, outputMax: 255, samplePeriodS: 1 });
  });

  it("registers a machine with loops from its model and a one-time code", async () => {
    const serial = `NEW-${uniqueSuffix()}`;
    const response = await postJson(`/api/v1/o/${a.organisation.slug}/machines`, { serial, modelId: fleetA.model.id, siteId: fleetA.sites[1].id, firmware: "1.2.3" }, ownerA);
    expect(response.status).toBe(201);
    const body = await response.json();
    expect(body.machine).toMatchObject({ serial, status: "active", firmware: "1.2.3", enrolment: "not_enrolled" });
    expect(body.machine.loops.map((l: { key: string }) => l.key)).toEqual(["temp", "speed"]);
    expect(body.enrolmentCode.code).toMatch(/^FB-/);
    expect(new Date(body.enrolmentCode.expiresAt).getTime() - Date.now()).toBeGreaterThan(6.9 * 86_400_000);
    // The code is stored hashed only.
    const stored = await db().execute<{ n: number }>(sql`select count(*)::int as n from enrolment_code where code_hash = ${body.enrolmentCode.code}`);
    expect(stored.rows[0].n).toBe(0);

    const dup = await postJson(`/api/v1/o/${a.organisation.slug}/machines`, { serial, modelId: fleetA.model.id, siteId: fleetA.sites[1].id }, ownerA);
    expect(dup.status).toBe(409);
    expect((await dup.json()).error.code).toBe("serial_taken");
  });

  it("refuses bad registrations with a clear error and changes nothing", async () => {
    const count = async () => (await db().select().from(machine).where(eq(machine.organisationId, a.organisation.id))).length;
    const before = await count();
    const path = `/api/v1/o/${a.organisation.slug}/machines`;
    const bad = [
      {},
      { serial: "", modelId: fleetA.model.id, siteId: fleetA.sites[0].id },
      { serial: "X 1; drop table machine", modelId: fleetA.model.id, siteId: fleetA.sites[0].id },
      { serial: "OK-1", modelId: "not-a-uuid", siteId: fleetA.sites[0].id },
      { serial: "OK-2", modelId: fleetA.model.id, siteId: fleetB.sites[0].id },
      { serial: "OK-3", modelId: fleetB.model.id, siteId: fleetA.sites[0].id },
      { serial: "x".repeat(65), modelId: fleetA.model.id, siteId: fleetA.sites[0].id },
    ];
    for (const body of bad) {
      const response = await postJson(path, body, ownerA);
      expect(response.status, JSON.stringify(body)).toBe(400);
      const json = await response.json();
      expect(json.error.code).toBeTruthy();
      expect(json.error.message).toBeTruthy();
    }
    expect((await postJson(path, "{oops", ownerA)).status).toBe(400);
    const plain = await fetch(`${APP_URL}${path}`, { method: "POST", headers: { "content-type": "text/plain", cookie: ownerA.cookie }, body: "{}" });
    expect(plain.status).toBe(415);
    const foreign = await postJson(path, { serial: "OK-4", modelId: fleetA.model.id, siteId: fleetA.sites[0].id }, ownerA, { origin: "https://evil.example" });
    expect(foreign.status).toBe(403);
    expect(await count()).toBe(before);
  });

  it("filters, sorts and paginates machines on the server", async () => {
    const slug = a.organisation.slug;
    const all = await (await get(`/api/v1/o/${slug}/machines?pageSize=2&sort=serial&dir=desc`, ownerA)).json();
    expect(all.pageSize).toBe(2);
    expect(all.items).toHaveLength(2);
    expect(all.total).toBeGreaterThanOrEqual(6);
    expect(all.items[0].serial > all.items[1].serial).toBe(true);
    const bySite = await (await get(`/api/v1/o/${slug}/machines?siteId=${fleetA.sites[0].id}`, ownerA)).json();
    expect(bySite.total).toBe(3);
    const q = await (await get(`/api/v1/o/${slug}/machines?q=${encodeURIComponent(fleetA.machines[0].serial)}`, ownerA)).json();
    expect(q.items.map((m: { id: string }) => m.id)).toContain(fleetA.machines[0].id);
    const wild = await (await get(`/api/v1/o/${slug}/machines?q=${encodeURIComponent("%_\\")}`, ownerA)).json();
    expect(wild.total).toBe(0);
    const silent = await (await get(`/api/v1/o/${slug}/machines?health=silent&customerId=${fleetA.customer.id}&modelId=${fleetA.model.id}`, ownerA)).json();
    expect(silent.total).toBeGreaterThan(0);
    for (const hostile of ["pageSize=100000", "page=0", "sort=password", "siteId=1%20or%201=1", "health=red", "dir=sideways"]) {
      const response = await get(`/api/v1/o/${slug}/machines?${hostile}`, ownerA);
      expect(response.status, hostile).toBe(400);
      expect((await response.json()).error.code).toBe("invalid_query");
    }
  });

  it("serves a loop's digests over a time range", async () => {
    const from = new Date(Date.now() - 3_600_000).toISOString();
    const response = await get(`/api/v1/o/${a.organisation.slug}/loops/${loopIdA}/digests?from=${encodeURIComponent(from)}`, ownerA);
    expect(response.status).toBe(200);
    const body = await response.json();
    expect(body.total).toBe(1);
    expect(body.items[0]).toMatchObject({ seq: 1, iae: 12 });
    expect((await get(`/api/v1/o/${a.organisation.slug}/loops/${loopIdA}/digests?from=tomorrow`, ownerA)).status).toBe(400);
    const bucketed = await (await get(`/api/v1/o/${a.organisation.slug}/loops/${loopIdA}/digests?from=${encodeURIComponent(from)}&bucket=3600`, ownerA)).json();
    expect(bucketed.items).toHaveLength(1);
  });

  it("needs a session and the right role", async () => {
    const unauth = await get(`/api/v1/o/${a.organisation.slug}/machines`);
    expect(unauth.status).toBe(401);
    expect((await unauth.json()).error.code).toBe("unauthenticated");
    const viewer = await signIn(a.people[2].email);
    expect((await get(`/api/v1/o/${a.organisation.slug}/machines`, viewer)).status).toBe(200);
    const auditBefore = await organisationAudit(a.organisation.id);
    // machines[0] has an enrolled device (beforeAll), machines[1] none.
    const statesBefore = [await machineState(fleetA.machines[0].id), await machineState(fleetA.machines[1].id)];
    expect(statesBefore[0].devices).toMatchObject([{ status: "active" }]);
    const refused = await postJson(`/api/v1/o/${a.organisation.slug}/machines`, { serial: "V-1", modelId: fleetA.model.id, siteId: fleetA.sites[0].id }, viewer);
    expect(refused.status).toBe(403);
    expect((await postJson(`/api/v1/o/${a.organisation.slug}/machines/${fleetA.machines[1].id}/revoke-device`, {}, viewer)).status).toBe(403);
    expect((await postJson(`/api/v1/o/${a.organisation.slug}/machines/${fleetA.machines[0].id}/revoke-device`, {}, viewer)).status).toBe(403);
    // The same through the pages' actions.
    expect((await postForm(`/o/${a.organisation.slug}/machines/new`, { serial: "V-1", modelId: fleetA.model.id, siteId: fleetA.sites[0].id }, viewer)).status).toBe(403);
    expect((await postForm(`/o/${a.organisation.slug}/machines/${fleetA.machines[0].id}`, { intent: "revoke-device" }, viewer)).status).toBe(403);
    // Nothing was written: no machine, no revoked device, no audit row.
    expect(await db().select().from(machine).where(and(eq(machine.organisationId, a.organisation.id), eq(machine.serial, "V-1")))).toEqual([]);
    expect([await machineState(fleetA.machines[0].id), await machineState(fleetA.machines[1].id)]).toEqual(statesBefore);
    expect(await organisationAudit(a.organisation.id)).toEqual(auditBefore);
  });
});

describe("isolation between organisations", () => {
  it("keeps organisation A's machines invisible to organisation B on every route", async () => {
    const slugA = a.organisation.slug;
    const slugB = b.organisation.slug;
    const idA = fleetA.machines[0].id;
    const before = await machineState(idA);
    expect(before.devices).toMatchObject([{ status: "active" }]);
    // B asks A's organisation directly: not a member, 404 like an unknown organisation.
    for (const path of [`/api/v1/o/${slugA}/machines`, `/api/v1/o/${slugA}/machines/${idA}`, `/api/v1/o/${slugA}/customers`, `/api/v1/o/${slugA}/sites`, `/api/v1/o/${slugA}/models`, `/api/v1/o/${slugA}/loops/${loopIdA}/digests`]) {
      expect((await get(path, ownerB)).status, path).toBe(404);
    }
    // B asks for A's ids under its own organisation.
    expect((await get(`/api/v1/o/${slugB}/machines/${idA}`, ownerB)).status).toBe(404);
    expect((await get(`/api/v1/o/${slugB}/loops/${loopIdA}/digests`, ownerB)).status).toBe(404);
    for (const command of ["enrolment-code", "revoke-device", "decommission"]) {
      expect((await postJson(`/api/v1/o/${slugB}/machines/${idA}/${command}`, {}, ownerB)).status).toBe(404);
      expect((await postJson(`/api/v1/o/${slugA}/machines/${idA}/${command}`, {}, ownerB)).status).toBe(404);
    }
    const listB = await (await get(`/api/v1/o/${slugB}/machines?pageSize=200`, ownerB)).json();
    expect(listB.items.map((m: { id: string }) => m.id)).not.toContain(idA);
    expect((await get(`/api/v1/o/${slugB}/machines?siteId=${fleetA.sites[0].id}`, ownerB).then((r) => r.json())).total).toBe(0);
    // Pages.
    expect((await get(`/o/${slugA}/machines`, ownerB)).status).toBe(404);
    expect((await get(`/o/${slugA}/machines/${idA}`, ownerB)).status).toBe(404);
    expect((await get(`/o/${slugB}/machines/${idA}`, ownerB)).status).toBe(404);
    const page = await (await get(`/o/${slugB}/machines`, ownerB)).text();
    expect(page).not.toContain(fleetA.machines[0].serial);
    // A's machine stays untouched: its device, its codes and its audit trail too.
    const [m] = await db().select().from(machine).where(eq(machine.id, idA));
    expect(m.status).toBe("active");
    expect(await machineState(idA)).toEqual(before);
  });

  // The machine page's actions, as B's owner with A's machine id under either slug.
  const pageCommands = ["enrolment-code", "revoke-device", "decommission"].flatMap((intent) => [
    { intent, under: "A's slug" as const },
    { intent, under: "B's slug" as const },
  ]);
  it.each(pageCommands)("refuses the page action $intent on A's machine under $under and changes nothing", async ({ intent, under }) => {
    const idA = fleetA.machines[0].id;
    const slug = under === "A's slug" ? a.organisation.slug : b.organisation.slug;
    const before = { a: await machineState(idA), auditB: await organisationAudit(b.organisation.id) };
    const response = await postForm(`/o/${slug}/machines/${idA}`, { intent }, ownerB);
    expect(response.status).toBe(404);
    expect(await response.text()).not.toMatch(/FB-[A-Z0-9]{5}-/);
    expect({ a: await machineState(idA), auditB: await organisationAudit(b.organisation.id) }).toEqual(before);
  });
});

describe("site manager scope", () => {
  it("sees only the assigned sites' machines, customers and sites", async () => {
    const manager = await signIn(a.people[1].email);
    const slug = a.organisation.slug;
    const list = await (await get(`/api/v1/o/${slug}/machines?pageSize=200`, manager)).json();
    expect(list.total).toBe(3);
    expect(list.items.every((m: { site: { id: string } }) => m.site.id === fleetA.sites[0].id)).toBe(true);
    const elsewhere = fleetA.machines.find((m) => m.siteId === fleetA.sites[1].id)!;
    expect((await get(`/api/v1/o/${slug}/machines/${elsewhere.id}`, manager)).status).toBe(404);
    expect((await get(`/api/v1/o/${slug}/machines?siteId=${fleetA.sites[1].id}`, manager).then((r) => r.json())).total).toBe(0);
    const sites = await (await get(`/api/v1/o/${slug}/sites`, manager)).json();
    expect(sites.items.map((s: { id: string }) => s.id)).toEqual([fleetA.sites[0].id]);
    expect((await postJson(`/api/v1/o/${slug}/machines`, { serial: "SM-1", modelId: fleetA.model.id, siteId: fleetA.sites[0].id }, manager)).status).toBe(403);
    expect((await get(`/o/${slug}/machines/${elsewhere.id}`, manager)).status).toBe(404);
    const page = await (await get(`/o/${slug}/machines`, manager)).text();
    expect(page).not.toContain(elsewhere.serial);
    expect(page).toContain(fleetA.machines[0].serial);
  });

  it("reads the digests of loops at its sites only", async () => {
    const manager = await signIn(a.people[1].email);
    const slug = a.organisation.slug;
    const loopOf = async (machineId: string) => (await db().select({ id: loop.id }).from(loop).where(eq(loop.machineId, machineId)).limit(1))[0]!.id;
    const elsewhere = await loopOf(fleetA.machines.find((m) => m.siteId === fleetA.sites[1].id)!.id);
    expect((await get(`/api/v1/o/${slug}/loops/${elsewhere}/digests`, manager)).status).toBe(404);
    expect((await get(`/api/v1/o/${slug}/loops/${elsewhere}/digests`, ownerA)).status).toBe(200);
    expect((await get(`/api/v1/o/${slug}/loops/${loopIdA}/digests`, manager)).status).toBe(200);
  });

  it("sees nothing without assignments", async () => {
    const person = await createUser(db(), { email: `sm-${uniqueSuffix()}@test.example`, name: "Unassigned" });
    await addMember(db(), { organisationId: a.organisation.id, userId: person.id, role: "site_manager" });
    const session = await signIn(person.email);
    expect((await (await get(`/api/v1/o/${a.organisation.slug}/machines`, session)).json()).total).toBe(0);
    expect((await (await get(`/api/v1/o/${a.organisation.slug}/customers`, session)).json()).total).toBe(0);
  });
});

describe("demo fleet", () => {
  it("has 48 Corvid lines and a dozen Pellworth skids, with the Halden manager scoped", async () => {
    const corvid = await (await get(`/api/v1/o/corvid/machines?pageSize=1`, await signIn("owner@corvid.example"))).json();
    expect(corvid.total).toBe(48);
    const pellworth = await (await get(`/api/v1/o/pellworth/machines?pageSize=1`, await signIn("owner@pellworth.example"))).json();
    expect(pellworth.total).toBe(12);
    const halden = await (await get(`/api/v1/o/corvid/machines?pageSize=200`, await signIn("manager@halden.example"))).json();
    expect(halden.total).toBe(26);
    expect(new Set(halden.items.map((m: { customer: { name: string } }) => m.customer.name))).toEqual(new Set(["Halden Plastics"]));
    const models = await (await get(`/api/v1/o/corvid/models`, await signIn("engineer@corvid.example"))).json();
    expect(models.items[0].loopTemplates.map((t: { key: string }) => t.key)).toEqual(["zone_1", "zone_2", "zone_3", "zone_4", "screw_speed", "melt_pressure"]);
  });

  it("gives the Halden manager the digests of Halden loops only", async () => {
    const manager = await signIn("manager@halden.example");
    const owner = await signIn("owner@corvid.example");
    /** A loop of a Corvid demo machine whose customer is (or is not) Halden Plastics. */
    const corvidLoop = async (halden: boolean) => {
      const [row] = await db()
        .select({ id: loop.id })
        .from(loop)
        .innerJoin(machine, and(eq(machine.organisationId, loop.organisationId), eq(machine.id, loop.machineId)))
        .innerJoin(site, and(eq(site.organisationId, machine.organisationId), eq(site.id, machine.siteId)))
        .innerJoin(customer, and(eq(customer.organisationId, site.organisationId), eq(customer.id, site.customerId)))
        .innerJoin(organisation, eq(organisation.id, loop.organisationId))
        .where(and(eq(organisation.slug, "corvid"), halden ? eq(customer.name, "Halden Plastics") : ne(customer.name, "Halden Plastics")))
        .limit(1);
      return row!.id;
    };
    const elsewhere = await corvidLoop(false);
    const atHalden = await corvidLoop(true);
    const from = encodeURIComponent(new Date(Date.now() - 86_400_000).toISOString());
    const refused = await get(`/api/v1/o/corvid/loops/${elsewhere}/digests?from=${from}`, manager);
    expect(refused.status).toBe(404);
    expect((await refused.json()).error.code).toBe("not_found");
    expect((await get(`/api/v1/o/corvid/loops/${elsewhere}/digests?from=${from}`, owner)).status).toBe(200);
    expect((await get(`/api/v1/o/corvid/loops/${atHalden}/digests?from=${from}`, manager)).status).toBe(200);
  });

  it("publishes each organisation's JWKS", async () => {
    const jwks = await (await fetch(`${APP_URL}/api/v1/o/corvid/jwks.json`)).json();
    expect(jwks.keys[0]).toMatchObject({ kty: "OKP", crv: "Ed25519", alg: "EdDSA", use: "sig" });
    expect(jwks.keys[0].d).toBeUndefined();
    expect((await fetch(`${APP_URL}/api/v1/o/no-such-org/jwks.json`)).status).toBe(404);
  });

  it("serves the OpenAPI 3.1 document", async () => {
    const doc = await (await fetch(`${APP_URL}/api/v1/openapi.json`)).json();
    expect(doc.openapi).toBe("3.1.0");
    expect(Object.keys(doc.paths)).toEqual(expect.arrayContaining(["/api/v1/device/enrol", "/api/v1/device/digests", "/api/v1/device/config", "/api/v1/device/config/ack"]));
    expect(doc.components.schemas.Digest.properties.satHighFrac).toMatchObject({ minimum: 0, maximum: 1 });
  });
});
