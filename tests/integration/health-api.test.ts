// The loop-health management API over HTTP as the demo's people: findings (list, one,
// acknowledge, resolve, bulk), a loop's health, the overview, retune requests and alert
// settings. Every rule gets its hostile request: a site manager reaching another customer's
// machine (404), a viewer triaging (403), another organisation (404), bad bodies (400, nothing changed).
import { sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb, db } from "../support/db";
import { get, inbox, postJson, signIn, type Session } from "../support/http";
import { APP_URL } from "../support/http";

afterAll(closeDb);

const BASE = "/api/v1/o/corvid";
let owner: Session, engineer: Session, viewer: Session, manager: Session, otherOrg: Session;
type Target = { machineId: string; loopId: string; otherLoopId: string; siteId: string; serial: string };
let own: Target, foreign: Target;
let ownFinding: string, foreignFinding: string, ownSecond: string;

async function machineAt(siteName: string): Promise<Target> {
  const [row] = (
    await db().execute<Target>(sql`
      select m.id as "machineId", m.serial, m.site_id as "siteId",
             (select l.id from loop l where l.organisation_id = m.organisation_id and l.machine_id = m.id order by l.key limit 1) as "loopId",
             (select l.id from loop l where l.organisation_id = m.organisation_id and l.machine_id = m.id order by l.key desc limit 1) as "otherLoopId"
      from machine m join site s on s.organisation_id = m.organisation_id and s.id = m.site_id join organisation o on o.id = m.organisation_id
      where o.slug = 'corvid' and s.name = ${siteName} order by m.serial desc limit 1`)
  ).rows;
  return row;
}

async function insertFinding(t: Target, loopId: string, kind: string): Promise<string> {
  const [row] = (
    await db().execute<{ id: string }>(sql`
      insert into finding (organisation_id, machine_id, loop_id, kind, severity, state, summary, evidence)
      select o.id, ${t.machineId}::uuid, ${loopId}::uuid, ${kind}, 'warning', 'open', ${`Test ${kind}`},
             ${JSON.stringify({ metric: "saturation.share24h", value: 0.07, threshold: 0.05, unit: "share", windowStart: null, windowEnd: null, figures: {} })}::jsonb
      from organisation o where o.slug = 'corvid'
      returning id`)
  ).rows;
  return row.id;
}

const stateOf = async (id: string) => (await db().execute<{ state: string }>(sql`select state from finding where id = ${id}::uuid`)).rows[0].state;
function put(path: string, body: unknown, session: Session) {
  return fetch(`${APP_URL}${path}`, { method: "PUT", headers: { "content-type": "application/json", origin: APP_URL, cookie: session.cookie }, body: JSON.stringify(body) });
}

beforeAll(async () => {
  [owner, engineer, viewer, manager, otherOrg] = await Promise.all([
    signIn("owner@corvid.example"),
    signIn("engineer@corvid.example"),
    signIn("viewer@corvid.example"),
    signIn("manager@halden.example"),
    signIn("owner@pellworth.example"),
  ]);
  own = await machineAt("Halden Riverside");
  foreign = await machineAt("Mirabel Valence");
  // Clean slate for these two machines (a rerun against the same database).
  await db().execute(sql`delete from finding where machine_id in (${own.machineId}::uuid, ${foreign.machineId}::uuid)`);
  ownFinding = await insertFinding(own, own.loopId, "saturation");
  ownSecond = await insertFinding(own, own.otherLoopId, "windup");
  foreignFinding = await insertFinding(foreign, foreign.loopId, "saturation");
});

describe("a site manager", () => {
  it("lists only findings of their own sites", async () => {
    const response = await get(`${BASE}/findings?pageSize=200`, manager);
    expect(response.status).toBe(200);
    const body = await response.json();
    const ids = body.items.map((f: { id: string }) => f.id);
    expect(ids).toContain(ownFinding);
    expect(ids).not.toContain(foreignFinding);
    expect(body).toMatchObject({ page: 1, pageSize: 200 });
    const item = body.items.find((f: { id: string }) => f.id === ownFinding);
    expect(item).toMatchObject({ kind: "saturation", severity: "warning", state: "open", machineId: own.machineId, machineSerial: own.serial, loopId: own.loopId, resolvedAt: null, evidence: { metric: "saturation.share24h" } });
    expect(Object.keys(item).sort()).toEqual(["evidence", "id", "kind", "loopId", "loopKey", "machineId", "machineSerial", "openedAt", "resolvedAt", "severity", "state", "summary", "updatedAt"]);
    // Filtering by another customer's machine finds nothing rather than leaking it.
    const filtered = await (await get(`${BASE}/findings?machineId=${foreign.machineId}`, manager)).json();
    expect(filtered.total).toBe(0);
  });

  it("gets 404 for another customer's finding, loop and machine through every route, and nothing changes", async () => {
    expect((await get(`${BASE}/findings/${foreignFinding}`, manager)).status).toBe(404);
    expect((await postJson(`${BASE}/findings/${foreignFinding}/acknowledge`, {}, manager)).status).toBe(404);
    expect((await postJson(`${BASE}/findings/${foreignFinding}/resolve`, { comment: "not mine" }, manager)).status).toBe(404);
    const bulk = await postJson(`${BASE}/findings/acknowledge`, { ids: [ownFinding, foreignFinding] }, manager);
    expect(bulk.status).toBe(404);
    expect(await stateOf(ownFinding)).toBe("open");
    expect(await stateOf(foreignFinding)).toBe("open");
    expect((await get(`${BASE}/loops/${foreign.loopId}/health`, manager)).status).toBe(404);
    expect((await get(`${BASE}/loops/not-a-uuid/health`, manager)).status).toBe(404);
    const before = (await db().execute<{ n: number }>(sql`select count(*)::int as n from retune_request where machine_id = ${foreign.machineId}::uuid`)).rows[0].n;
    expect((await postJson(`${BASE}/retune-requests`, { machineId: foreign.machineId, observation: "Zone 2 overshoots at start-up." }, manager)).status).toBe(404);
    // Their own machine with another machine's loop is no better.
    expect((await postJson(`${BASE}/retune-requests`, { machineId: own.machineId, loopId: foreign.loopId, observation: "Zone 2 overshoots at start-up." }, manager)).status).toBe(404);
    expect((await db().execute<{ n: number }>(sql`select count(*)::int as n from retune_request where machine_id = ${foreign.machineId}::uuid`)).rows[0].n).toBe(before);
  });

  it("acknowledges and resolves their own findings with comments kept in the history", async () => {
    const ack = await postJson(`${BASE}/findings/${ownFinding}/acknowledge`, { comment: "Maintenance booked." }, manager);
    expect(ack.status).toBe(200);
    expect(await ack.json()).toMatchObject({ id: ownFinding, state: "acknowledged", history: [{ state: "acknowledged", actorName: "Birgit Solheim", comment: "Maintenance booked." }] });
    const resolved = await postJson(`${BASE}/findings/${ownFinding}/resolve`, { comment: "Heater band replaced." }, manager);
    expect(resolved.status).toBe(200);
    const body = await resolved.json();
    expect(body.state).toBe("resolved");
    expect(body.resolvedAt).not.toBeNull();
    expect(body.history.map((h: { state: string; comment: string }) => [h.state, h.comment])).toEqual([["acknowledged", "Maintenance booked."], ["resolved", "Heater band replaced."]]);
    // A resolved finding stays resolved.
    expect((await postJson(`${BASE}/findings/${ownFinding}/acknowledge`, {}, manager)).status).toBe(409);
  });

  it("requests a retune of their machine; engineers are e-mailed, move it along, and the manager sees each comment", async () => {
    const engineerMail = (await inbox("engineer@corvid.example")).length;
    const created = await postJson(`${BASE}/retune-requests`, { machineId: own.machineId, loopId: own.loopId, observation: "Zone 1 hunts around set point after the screw change." }, manager);
    expect(created.status).toBe(201);
    const { id, state } = await created.json();
    expect(state).toBe("open");
    const mail = await inbox("engineer@corvid.example");
    expect(mail.length).toBe(engineerMail + 1);
    expect(mail[0].subject).toContain(own.serial);

    // Site managers do not run the queue.
    expect((await postJson(`${BASE}/retune-requests/${id}/state`, { state: "in_progress", comment: "x" }, manager)).status).toBe(403);
    const moved = await postJson(`${BASE}/retune-requests/${id}/state`, { state: "in_progress", comment: "Looking at the step test from Tuesday." }, engineer);
    expect(moved.status).toBe(200);
    expect((await postJson(`${BASE}/retune-requests/${id}/state`, { state: "open", comment: "back" }, engineer)).status).toBe(409);
    expect((await postJson(`${BASE}/retune-requests/${id}/state`, { state: "done", comment: "New gains released as version 3." }, engineer)).status).toBe(200);

    const list = await (await get(`${BASE}/retune-requests`, manager)).json();
    const mine = list.items.find((r: { id: string }) => r.id === id);
    expect(mine).toMatchObject({ state: "done", machineId: own.machineId, loopId: own.loopId, requestedBy: "Birgit Solheim" });
    expect(mine.history.map((h: { state: string; comment: string }) => [h.state, h.comment])).toEqual([
      ["open", "Zone 1 hunts around set point after the screw change."],
      ["in_progress", "Looking at the step test from Tuesday."],
      ["done", "New gains released as version 3."],
    ]);
    // Engineers see every site's requests; the manager's list holds only their sites'.
    const all = await (await get(`${BASE}/retune-requests`, engineer)).json();
    expect(all.items.map((r: { id: string }) => r.id)).toContain(id);
    expect(list.items.every((r: { machineId: string }) => r.machineId !== foreign.machineId)).toBe(true);
    // Engineers do not file requests (capability retune:request).
    expect((await postJson(`${BASE}/retune-requests`, { machineId: own.machineId, observation: "Something odd." }, engineer)).status).toBe(403);
  });

  it("keeps alert sites within their own, whatever they send", async () => {
    const initial = await (await get(`${BASE}/alert-subscription`, manager)).json();
    expect(initial).toMatchObject({ minSeverity: "warning", siteIds: [], summaryAfter: 10 });
    expect(initial.kinds).toContain("saturation");
    const saved = await put(`${BASE}/alert-subscription`, { kinds: ["saturation", "silent"], minSeverity: "critical", siteIds: [own.siteId, foreign.siteId], summaryAfter: 5 }, manager);
    expect(saved.status).toBe(200);
    expect(await saved.json()).toEqual({ kinds: ["saturation", "silent"], minSeverity: "critical", siteIds: [own.siteId], summaryAfter: 5 });
  });

  it("sees an overview of their own sites only", async () => {
    const response = await get(`${BASE}/overview`, manager);
    expect(response.status).toBe(200);
    const mine = await response.json();
    const all = await (await get(`${BASE}/overview`, owner)).json();
    const count = (o: { machines: Record<string, number> }) => Object.values(o.machines).reduce((a, b) => a + b, 0);
    const active = async (customer: string | null) =>
      (await db().execute<{ n: number }>(sql`
        select count(*)::int as n from machine m join site s on s.organisation_id = m.organisation_id and s.id = m.site_id
        join customer c on c.organisation_id = s.organisation_id and c.id = s.customer_id join organisation o on o.id = m.organisation_id
        where o.slug = 'corvid' and m.status = 'active' and (${customer}::text is null or c.name = ${customer})`)).rows[0].n;
    expect(count(mine)).toBe(await active("Halden Plastics"));
    expect(count(all)).toBe(await active(null));
    expect(count(mine)).toBeLessThan(count(all));
    expect(mine.trend).toHaveLength(30);
    expect(mine.openFindings.byKind.saturation ?? 0).toBe(0);
    expect(all.openFindings.byKind.saturation).toBeGreaterThanOrEqual(1);
    const outside = await (await get(`${BASE}/overview?siteId=${foreign.siteId}`, manager)).json();
    expect(count(outside)).toBe(0);
  });
});

describe("roles and organisations", () => {
  it("gives a viewer 403 on acknowledge, resolve and bulk acknowledge, and changes nothing", async () => {
    expect((await postJson(`${BASE}/findings/${foreignFinding}/acknowledge`, {}, viewer)).status).toBe(403);
    expect((await postJson(`${BASE}/findings/${foreignFinding}/resolve`, { comment: "x" }, viewer)).status).toBe(403);
    expect((await postJson(`${BASE}/findings/acknowledge`, { ids: [foreignFinding] }, viewer)).status).toBe(403);
    expect(await stateOf(foreignFinding)).toBe("open");
    expect((await get(`${BASE}/findings/${foreignFinding}`, viewer)).status).toBe(200);
  });

  it("answers 404 to another organisation's members, and for this organisation's ids under their own slug", async () => {
    for (const path of [`${BASE}/findings`, `${BASE}/findings/${foreignFinding}`, `${BASE}/overview`, `${BASE}/loops/${foreign.loopId}/health`, `${BASE}/retune-requests`, `${BASE}/alert-subscription`]) {
      expect((await get(path, otherOrg)).status, path).toBe(404);
    }
    expect((await postJson(`${BASE}/findings/${foreignFinding}/acknowledge`, {}, otherOrg)).status).toBe(404);
    expect((await get(`/api/v1/o/pellworth/findings/${foreignFinding}`, otherOrg)).status).toBe(404);
    expect((await postJson(`/api/v1/o/pellworth/findings/${foreignFinding}/resolve`, { comment: "x" }, otherOrg)).status).toBe(404);
    expect((await get(`/api/v1/o/pellworth/loops/${foreign.loopId}/health`, otherOrg)).status).toBe(404);
    expect(await stateOf(foreignFinding)).toBe("open");
  });

  it("answers 400 to bad bodies and queries and changes nothing", async () => {
    const bad = async (response: Response, code?: string) => {
      expect(response.status).toBe(400);
      const body = await response.json();
      expect(body.error).toMatchObject({ code: code ?? expect.any(String), message: expect.any(String) });
    };
    await bad(await postJson(`${BASE}/findings/${foreignFinding}/resolve`, {}, engineer));
    await bad(await postJson(`${BASE}/findings/${foreignFinding}/resolve`, { comment: "   " }, engineer));
    await bad(await postJson(`${BASE}/findings/${foreignFinding}/acknowledge`, { comment: 5 }, engineer));
    await bad(await postJson(`${BASE}/findings/${foreignFinding}/acknowledge`, "{not json", engineer), "invalid_json");
    await bad(await postJson(`${BASE}/findings/acknowledge`, { ids: ["nope"] }, engineer));
    await bad(await postJson(`${BASE}/findings/acknowledge`, { ids: [] }, engineer));
    expect(await stateOf(foreignFinding)).toBe("open");
    await bad(await get(`${BASE}/findings?state=closed`, engineer), "invalid_query");
    await bad(await get(`${BASE}/findings?pageSize=1000`, engineer), "invalid_query");
    await bad(await get(`${BASE}/overview?siteId=123`, engineer), "invalid_query");
    const requests = (await db().execute<{ n: number }>(sql`select count(*)::int as n from retune_request`)).rows[0].n;
    await bad(await postJson(`${BASE}/retune-requests`, { machineId: own.machineId, observation: "" }, manager));
    await bad(await postJson(`${BASE}/retune-requests`, { machineId: "x", observation: "Zone 1 hunts." }, manager));
    expect((await db().execute<{ n: number }>(sql`select count(*)::int as n from retune_request`)).rows[0].n).toBe(requests);
    const before = await (await get(`${BASE}/alert-subscription`, engineer)).json();
    await bad(await put(`${BASE}/alert-subscription`, { kinds: ["nope"], minSeverity: "warning", siteIds: [], summaryAfter: 5 }, engineer));
    await bad(await put(`${BASE}/alert-subscription`, { kinds: [], minSeverity: "warning", siteIds: ["00000000-0000-4000-8000-000000000000"], summaryAfter: 5 }, engineer), "invalid_site");
    expect(await (await get(`${BASE}/alert-subscription`, engineer)).json()).toEqual(before);
  });

  it("lets an engineer bulk-acknowledge, sort and page the findings list", async () => {
    const response = await postJson(`${BASE}/findings/acknowledge`, { ids: [ownSecond, foreignFinding], comment: "Seen in the weekly review." }, engineer);
    expect(response.status).toBe(200);
    expect(await response.json()).toEqual({ acknowledged: 2 });
    expect(await stateOf(ownSecond)).toBe("acknowledged");
    const page = await (await get(`${BASE}/findings?state=acknowledged&sort=machineSerial&dir=asc&pageSize=1`, engineer)).json();
    expect(page.items).toHaveLength(1);
    expect(page.total).toBeGreaterThanOrEqual(2);
    const detail = await (await get(`${BASE}/findings/${foreignFinding}`, engineer)).json();
    expect(detail.history).toEqual([{ at: expect.any(String), state: "acknowledged", actorName: "Priya Albright", comment: "Seen in the weekly review." }]);
    const series = await get(`${BASE}/findings/${foreignFinding}/series`, engineer);
    expect(series.status).toBe(200);
    expect(await series.json()).toMatchObject({ metric: "saturation.share", unit: "share", threshold: 0.05, points: [] });
    expect((await get(`${BASE}/findings/${foreignFinding}/series`, manager)).status).toBe(404);
    const health = await get(`${BASE}/loops/${foreign.loopId}/health`, engineer);
    expect(health.status).toBe(200);
    expect(await health.json()).toMatchObject({ loopId: foreign.loopId, band: "silent", drift: { state: "learning", limit: 5 } });
  });
});
