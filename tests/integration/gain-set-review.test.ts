// Gain sets through the management API: draft → proposed → approved by a second member, the
// proposal checks, four-eyes, roles and tenancy; and the append-only audit log. Every refusal
// is checked to have changed nothing.
import { and, count, eq, sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { auditEvent, gainSet, gainSetHistory, loopTemplate, organisation, user } from "~/.server/db/schema";
import { closeDb, db } from "../support/db";
import { addMember, createUser, uniqueSuffix } from "../factories";
import { APP_URL, get, postForm, postJson, signIn, type Session } from "../support/http";

afterAll(closeDb);

let engineer: Session;
let engineer2: Session;
let admin: Session;
let viewer: Session;
let manager: Session;
let outsider: Session;
let zone: { id: string; organisationId: string };
let pellworthFlowId: string;

const API = "/api/v1/o/corvid/gain-sets";

beforeAll(async () => {
  [engineer, engineer2, admin, viewer, manager, outsider] = await Promise.all(
    ["engineer@corvid.example", "engineer2@corvid.example", "admin@corvid.example", "viewer@corvid.example", "manager@halden.example", "owner@pellworth.example"].map((e) => signIn(e)),
  );
  const templateOf = async (slug: string, key: string) => {
    const [row] = await db()
      .select({ id: loopTemplate.id, organisationId: loopTemplate.organisationId })
      .from(loopTemplate)
      .innerJoin(organisation, eq(organisation.id, loopTemplate.organisationId))
      .where(and(eq(organisation.slug, slug), eq(loopTemplate.key, key)))
      .limit(1);
    return row!;
  };
  zone = await templateOf("corvid", "zone_2");
  pellworthFlowId = (await templateOf("pellworth", "flow")).id;
});

const body = (over: Record<string, unknown> = {}) => ({ loopTemplateId: zone.id, form: "parallel", gains: { kp: 6, ki: 0.04, kd: 0 }, note: "from the review test", ...over });

async function create(over: Record<string, unknown> = {}, session = engineer) {
  const response = await postJson(API, body(over), session);
  expect(response.status).toBe(201);
  return (await response.json()) as { id: string; version: number; state: string };
}

async function snapshot(id: string) {
  const [row] = await db().select().from(gainSet).where(eq(gainSet.id, id));
  const [{ n: history }] = await db().select({ n: count() }).from(gainSetHistory).where(eq(gainSetHistory.gainSetId, id));
  const [{ n: audits }] = await db().select({ n: count() }).from(auditEvent).where(eq(auditEvent.targetId, id));
  return { state: row!.state, checks: row!.checks, decidedBy: row!.decidedBy, proposedBy: row!.proposedBy, history, audits };
}

async function gainSetCount() {
  const [{ n }] = await db().select({ n: count() }).from(gainSet).where(eq(gainSet.organisationId, zone.organisationId));
  return n;
}

/** The database's own message for a refused statement (drizzle wraps it in "Failed query"). */
async function refusal(statement: Promise<unknown>): Promise<string> {
  try {
    await statement;
  } catch (error) {
    const e = error as { message: string; cause?: { message?: string } };
    return `${e.message} ${e.cause?.message ?? ""}`;
  }
  return "not refused";
}

async function userId(email: string) {
  const [row] = await db().select({ id: user.id }).from(user).where(eq(user.email, email));
  return row!.id;
}

describe("the happy path", () => {
  it("drafts, proposes and has a second engineer approve, with history and audit", async () => {
    const created = await create();
    expect(created.state).toBe("draft");
    expect(created.version).toBeGreaterThan(0);

    const proposed = await postJson(`${API}/${created.id}/propose`, {}, engineer);
    expect(proposed.status).toBe(200);
    expect(await proposed.json()).toMatchObject({ id: created.id, state: "proposed", checks: { passed: true } });

    const approved = await postJson(`${API}/${created.id}/approve`, { comment: "Looks right on the reference model." }, engineer2);
    expect(approved.status).toBe(200);
    expect(await approved.json()).toMatchObject({ id: created.id, state: "approved" });

    const detail = await (await get(`${API}/${created.id}`, viewer)).json();
    expect(detail.state).toBe("approved");
    expect(detail.checks.checks.map((c: { name: string; passed: boolean }) => [c.name, c.passed])).toEqual([
      ["finite", true],
      ["envelope", true],
      ["integrator_limits", true],
      ["closed_loop", true],
    ]);
    expect(detail.history.map((h: { state: string }) => h.state)).toEqual(["draft", "proposed", "approved"]);
    expect(detail.history[2].comment).toBe("Looks right on the reference model.");
    expect(detail.history[2].actor.id).toBe(await userId("engineer2@corvid.example"));

    const audits = await db().select().from(auditEvent).where(eq(auditEvent.targetId, created.id)).orderBy(auditEvent.createdAt);
    expect(audits.map((a) => a.action)).toEqual(["gain_set.drafted", "gain_set.proposed", "gain_set.approved"]);
    expect(audits[2]!.before).toMatchObject({ state: "proposed" });
    expect(audits[2]!.after).toMatchObject({ state: "approved" });
    expect(audits[0]!.after).toMatchObject({ gains: { kp: 6, ki: 0.04, kd: 0 } });
  });

  it("numbers versions per template and converts standard-form gains (ki = Kc/Ti, kd = Kc·Td)", async () => {
    const first = await create();
    const second = await create({ form: "standard", gains: { kc: 6, ti: 150, td: 2 } });
    expect(second.version).toBe(first.version + 1);
    const detail = await (await get(`${API}/${second.id}`, engineer)).json();
    expect(detail.gains.kp).toBeCloseTo(6, 12);
    expect(detail.gains.ki).toBeCloseTo(0.04, 12);
    expect(detail.gains.kd).toBeCloseTo(12, 12);
    expect(detail.enteredGains).toEqual({ form: "standard", kc: 6, ti: 150, td: 2 });
  });

  it("lists gain sets by template and state as {items, total, page, pageSize}", async () => {
    const response = await get(`${API}?loopTemplateId=${zone.id}&state=approved&pageSize=5`, viewer);
    expect(response.status).toBe(200);
    const list = await response.json();
    expect(list).toMatchObject({ page: 1, pageSize: 5 });
    expect(list.total).toBeGreaterThan(0);
    expect(list.items.every((g: { state: string; loopTemplateId: string }) => g.state === "approved" && g.loopTemplateId === zone.id)).toBe(true);
    expect((await get(`${API}?state=nonsense`, viewer)).status).toBe(400);
  });
});

describe("four-eyes", () => {
  it("refuses approval by the proposer with 403 own_gain_set and changes nothing", async () => {
    const { id } = await create();
    expect((await postJson(`${API}/${id}/propose`, {}, engineer)).status).toBe(200);
    const before = await snapshot(id);
    const response = await postJson(`${API}/${id}/approve`, { comment: "mine" }, engineer);
    expect(response.status).toBe(403);
    expect((await response.json()).error.code).toBe("own_gain_set");
    expect(await snapshot(id)).toEqual(before);
  });

  it("requires a comment to reject, and records it", async () => {
    const { id } = await create();
    await postJson(`${API}/${id}/propose`, {}, engineer);
    const before = await snapshot(id);
    const bare = await postJson(`${API}/${id}/reject`, {}, engineer2);
    expect(bare.status).toBe(400);
    expect(await snapshot(id)).toEqual(before);
    const rejected = await postJson(`${API}/${id}/reject`, { comment: "Integral too slow for the new screw." }, engineer2);
    expect(rejected.status).toBe(200);
    const detail = await (await get(`${API}/${id}`, engineer)).json();
    expect(detail.state).toBe("rejected");
    expect(detail.history.at(-1)).toMatchObject({ state: "rejected", comment: "Integral too slow for the new screw." });
  });

  it("answers 409 for a transition from the wrong state and changes nothing", async () => {
    const { id } = await create();
    const before = await snapshot(id);
    const response = await postJson(`${API}/${id}/approve`, {}, engineer2);
    expect(response.status).toBe(409);
    expect((await response.json()).error.code).toBe("invalid_state");
    expect(await snapshot(id)).toEqual(before);
  });

  it("never changes a proposed set's parameters, even from SQL (a change is a new version)", async () => {
    const { id } = await create();
    await postJson(`${API}/${id}/propose`, {}, engineer);
    expect(await refusal(db().execute(sql`update gain_set set gains = '{"kp": 30, "ki": 0, "kd": 0}'::jsonb where id = ${id}`))).toMatch(/cannot change/);
    const revised = await create({ basedOnId: id, gains: { kp: 7, ki: 0.045, kd: 0 } });
    const detail = await (await get(`${API}/${revised.id}`, engineer)).json();
    expect(detail.basedOn.id).toBe(id);
    expect(detail.state).toBe("draft");
  });
});

describe("proposal checks", () => {
  it("refuses gains outside the envelope with 422 checks_failed and changes nothing", async () => {
    const { id } = await create({ gains: { kp: 45, ki: 0.04, kd: 0 } });
    const before = await snapshot(id);
    const response = await postJson(`${API}/${id}/propose`, {}, engineer);
    expect(response.status).toBe(422);
    const { error } = await response.json();
    expect(error.code).toBe("checks_failed");
    expect(error.issues.map((i: { path: string[] }) => i.path[0])).toContain("envelope");
    expect(error.issues.find((i: { path: string[] }) => i.path[0] === "envelope").message).toContain("kp = 45");
    expect(await snapshot(id)).toEqual(before);
  });

  it("refuses a loop with too little margin on the reference model (kp 12, ki 0.08: GM ≈ 1.55)", async () => {
    const { id } = await create({ gains: { kp: 12, ki: 0.08, kd: 0 } });
    const response = await postJson(`${API}/${id}/propose`, {}, engineer);
    expect(response.status).toBe(422);
    const { error } = await response.json();
    expect(error.issues.map((i: { path: string[] }) => i.path[0])).toEqual(["closed_loop"]);
  });

  it("refuses integrator limits outside the output range", async () => {
    const { id } = await create({ integratorMin: 0, integratorMax: 400 });
    const response = await postJson(`${API}/${id}/propose`, {}, engineer);
    expect(response.status).toBe(422);
    expect((await response.json()).error.issues.map((i: { path: string[] }) => i.path[0])).toEqual(["integrator_limits"]);
  });

  it("lets only an owner or admin override, only with a written reason, and audits it", async () => {
    const { id } = await create({ gains: { kp: 45, ki: 0.04, kd: 0 } });
    const before = await snapshot(id);
    const byEngineer = await postJson(`${API}/${id}/propose`, { override: { reason: "The envelope is too tight for this line." } }, engineer);
    expect(byEngineer.status).toBe(403);
    expect((await byEngineer.json()).error.code).toBe("forbidden");
    const noReason = await postJson(`${API}/${id}/propose`, { override: { reason: "  " } }, admin);
    expect(noReason.status).toBe(400);
    expect(await snapshot(id)).toEqual(before);

    const overridden = await postJson(`${API}/${id}/propose`, { override: { reason: "Line 7 runs a larger heater; envelope update pending." } }, admin);
    expect(overridden.status).toBe(200);
    const detail = await (await get(`${API}/${id}`, engineer)).json();
    expect(detail.state).toBe("proposed");
    expect(detail.overrideReason).toBe("Line 7 runs a larger heater; envelope update pending.");
    expect(detail.checks.passed).toBe(false);
    expect(detail.checks.overridden.reason).toBe("Line 7 runs a larger heater; envelope update pending.");
    const [audit] = await db().select().from(auditEvent).where(and(eq(auditEvent.targetId, id), eq(auditEvent.action, "gain_set.checks_overridden")));
    expect(audit!.detail).toMatchObject({ reason: "Line 7 runs a larger heater; envelope update pending." });
    expect(audit!.actor).toBe(await userId("admin@corvid.example"));
  });

  it("refuses malformed drafts with 400 and stores nothing", async () => {
    const before = await gainSetCount();
    for (const bad of [
      body({ gains: { kp: 1, ki: 0 } }),
      body({ form: "standard" }),
      body({ gains: { kp: "1", ki: 0, kd: 0 } }),
      body({ antiWindup: "freeze" }),
      body({ extra: true }),
      { loopTemplateId: zone.id, form: "parallel", gains: { kp: 1, ki: 0, kd: 0 } },
    ]) {
      const response = await postJson(API, bad, engineer);
      expect(response.status).toBe(400);
      expect((await response.json()).error.code).toBe("invalid_body");
    }
    expect(await postJson(API, "{not json", engineer).then((r) => r.status)).toBe(400);
    expect(await gainSetCount()).toBe(before);
  });
});

describe("roles and tenancy", () => {
  it("refuses a viewer and a site manager creating gain sets (403) and stores nothing", async () => {
    const before = await gainSetCount();
    for (const session of [viewer, manager]) {
      const response = await postJson(API, body(), session);
      expect(response.status).toBe(403);
      expect((await response.json()).error.code).toBe("forbidden");
    }
    expect(await gainSetCount()).toBe(before);
  });

  it("refuses a viewer and a site manager proposing, approving or rejecting (403) and changes nothing", async () => {
    const { id } = await create();
    await postJson(`${API}/${id}/propose`, {}, engineer);
    const before = await snapshot(id);
    for (const session of [viewer, manager]) {
      for (const command of ["approve", "reject"]) {
        const response = await postJson(`${API}/${id}/${command}`, { comment: "no" }, session);
        expect(response.status).toBe(403);
        expect((await response.json()).error.code).toBe("forbidden");
      }
    }
    const draft = await create();
    const draftBefore = await snapshot(draft.id);
    for (const session of [viewer, manager]) expect((await postJson(`${API}/${draft.id}/propose`, {}, session)).status).toBe(403);
    expect(await snapshot(id)).toEqual(before);
    expect(await snapshot(draft.id)).toEqual(draftBefore);
  });

  it("does not show gain sets to a site manager", async () => {
    expect((await get(API, manager)).status).toBe(403);
  });

  it("answers 404 for another organisation's ids, under either slug, and changes nothing", async () => {
    const { id } = await create();
    const before = await snapshot(id);
    expect((await get(`${API}/${id}`, outsider)).status).toBe(404);
    expect((await get(`/api/v1/o/pellworth/gain-sets/${id}`, outsider)).status).toBe(404);
    for (const [command, payload] of [["propose", {}], ["approve", { comment: "x" }], ["reject", { comment: "x" }]] as const) {
      expect((await postJson(`/api/v1/o/pellworth/gain-sets/${id}/${command}`, payload, outsider)).status).toBe(404);
      expect((await postJson(`${API}/${id}/${command}`, payload, outsider)).status).toBe(404);
    }
    expect(await snapshot(id)).toEqual(before);
    // Corvid's engineer cannot draft for Pellworth's template under Corvid's slug.
    const foreign = await postJson(API, body({ loopTemplateId: pellworthFlowId }), engineer);
    expect(foreign.status).toBe(404);
    expect((await get(`/o/pellworth/gain-sets/${id}`, outsider)).status).toBe(404);
  });
});

describe("API tokens", () => {
  it("lets a write token draft and propose (empty body too), never approve or override, and audits it as the token", async () => {
    const page = await postForm("/o/corvid/developer", { intent: "create-token", name: `gain-sets-${uniqueSuffix()}`, scope: "write" }, admin);
    expect(page.status).toBe(200);
    const secret = (await page.text()).match(/fbk_[A-Za-z0-9_-]{20,}/)![0];
    const call = (path: string, init: RequestInit = {}) =>
      fetch(`${APP_URL}${path}`, { ...init, redirect: "manual", headers: { authorization: `Bearer ${secret}`, ...(init.body ? { "content-type": "application/json" } : {}) } });
    const created = await call(API, { method: "POST", body: JSON.stringify(body()) });
    expect(created.status).toBe(201);
    const { id } = (await created.json()) as { id: string };
    const outside = await call(API, { method: "POST", body: JSON.stringify(body({ gains: { kp: 45, ki: 0.04, kd: 0 } })) });
    const outsideId = ((await outside.json()) as { id: string }).id;
    const override = await call(`${API}/${outsideId}/propose`, { method: "POST", body: JSON.stringify({ override: { reason: "A token cannot take this responsibility." } }) });
    expect(override.status).toBe(403);
    expect((await snapshot(outsideId)).state).toBe("draft");
    const proposed = await call(`${API}/${id}/propose`, { method: "POST" });
    expect(proposed.status).toBe(200);
    const approve = await call(`${API}/${id}/approve`, { method: "POST", body: "{}" });
    expect(approve.status).toBe(403);
    expect((await snapshot(id)).state).toBe("proposed");
    const [drafted] = await db().select().from(auditEvent).where(and(eq(auditEvent.targetId, id), eq(auditEvent.action, "gain_set.drafted")));
    expect(drafted!.actor).toMatch(/^token:/);
  });
});

describe("the pages", () => {
  it("approves on the page only for another member, with the caution shown", async () => {
    const { id } = await create();
    await postJson(`${API}/${id}/propose`, {}, engineer);
    const own = await (await get(`/o/corvid/gain-sets/${id}`, engineer)).text();
    expect(own).toContain("You proposed this gain set");
    const other = await (await get(`/o/corvid/gain-sets/${id}`, engineer2)).text();
    expect(other).toContain("live-change-caution");
    const refused = await postForm(`/o/corvid/gain-sets/${id}`, { intent: "approve", comment: "" }, engineer);
    expect(refused.status).toBe(403);
    expect((await snapshot(id)).state).toBe("proposed");
    const viewerTry = await postForm(`/o/corvid/gain-sets/${id}`, { intent: "approve", comment: "" }, viewer);
    expect(viewerTry.status).toBe(403);
    expect((await postForm(`/o/corvid/gain-sets/${id}`, { intent: "approve", comment: "ok" }, engineer2)).status).toBe(200);
    expect((await snapshot(id)).state).toBe("approved");
  });

  it("makes a revision a new draft, refusing bad numbers with nothing stored", async () => {
    const { id } = await create();
    await postJson(`${API}/${id}/propose`, {}, engineer);
    const before = await gainSetCount();
    const fields = { intent: "revise", kp: "7", ki: "0.045", kd: "0", filterN: "", setpointWeight: "0.8", integratorMin: "0", integratorMax: "255", antiWindup: "back_calculation", note: "revised" };
    const bad = await postForm(`/o/corvid/gain-sets/${id}`, { ...fields, kp: "seven" }, engineer2);
    expect(bad.status).toBe(400);
    expect(await gainSetCount()).toBe(before);
    const viewerTry = await postForm(`/o/corvid/gain-sets/${id}`, fields, viewer);
    expect(viewerTry.status).toBe(403);
    expect(await gainSetCount()).toBe(before);
    const good = await postForm(`/o/corvid/gain-sets/${id}`, fields, engineer2);
    expect(good.status).toBe(302);
    const newId = good.headers.get("location")!.split("/").at(-1)!;
    const detail = await (await get(`${API}/${newId}`, engineer)).json();
    expect(detail).toMatchObject({ state: "draft", basedOn: { id }, setpointWeight: 0.8, antiWindup: "back_calculation", gains: { kp: 7, ki: 0.045, kd: 0 } });
    expect((await snapshot(id)).state).toBe("proposed");
  });

  it("opens the comparison of two versions", async () => {
    const a = await create();
    const b = await create({ gains: { kp: 7, ki: 0.045, kd: 0 } });
    const page = await get(`/o/corvid/gain-sets/compare?a=${a.id}&b=${b.id}`, viewer);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain("Set-point step");
    expect((await get(`/o/corvid/gain-sets/compare?a=${a.id}&b=not-an-id`, viewer)).status).toBe(400);
  });
});

describe("the audit log", () => {
  it("refuses UPDATE, DELETE and TRUNCATE from SQL", async () => {
    const [row] = await db().select({ id: auditEvent.id }).from(auditEvent).where(eq(auditEvent.organisationId, zone.organisationId)).limit(1);
    const [{ n: before }] = await db().select({ n: count() }).from(auditEvent);
    expect(await refusal(db().execute(sql`update audit_event set action = 'tampered' where id = ${row!.id}`))).toMatch(/append-only: UPDATE/);
    expect(await refusal(db().execute(sql`delete from audit_event where id = ${row!.id}`))).toMatch(/append-only: DELETE/);
    expect(await refusal(db().execute(sql`truncate audit_event`))).toMatch(/append-only: TRUNCATE/);
    const [{ n: after }] = await db().select({ n: count() }).from(auditEvent);
    expect(after).toBe(before);
    const [still] = await db().select({ action: auditEvent.action }).from(auditEvent).where(eq(auditEvent.id, row!.id));
    expect(still!.action).not.toBe("tampered");
  });

  it("filters by action, actor and time, and pages", async () => {
    const engineer2Id = await userId("engineer2@corvid.example");
    const response = await get(`/api/v1/o/corvid/audit?action=gain_set.approved&actorId=${engineer2Id}&pageSize=2`, engineer);
    expect(response.status).toBe(200);
    const log = await response.json();
    expect(log).toMatchObject({ page: 1, pageSize: 2 });
    expect(log.total).toBeGreaterThan(0);
    expect(log.items.length).toBeLessThanOrEqual(2);
    expect(log.items.every((i: { action: string; actor: { id: string } }) => i.action === "gain_set.approved" && i.actor.id === engineer2Id)).toBe(true);
    const group = await (await get(`/api/v1/o/corvid/audit?action=gain_set`, engineer)).json();
    expect(group.items.every((i: { action: string }) => i.action.startsWith("gain_set."))).toBe(true);
    const future = await (await get(`/api/v1/o/corvid/audit?from=2999-01-01T00:00:00Z`, engineer)).json();
    expect(future.total).toBe(0);
    expect((await get(`/api/v1/o/corvid/audit?from=yesterday-ish`, engineer)).status).toBe(400);
    expect((await get(`/api/v1/o/corvid/audit?from=2026-02-01&to=2026-01-01`, engineer)).status).toBe(400);
  });

  it("exports CSV with formulas neutralised", async () => {
    const response = await get(`/api/v1/o/corvid/audit?format=csv&action=gain_set`, engineer);
    expect(response.status).toBe(200);
    expect(response.headers.get("content-type")).toContain("text/csv");
    const text = await response.text();
    expect(text.split("\r\n")[0]).toBe("at,actorId,actor,action,targetType,targetId,detail,before,after");
    expect(text).toContain("gain_set.drafted");
  });

  it("is for owners, admins and engineers only; other organisations get 404", async () => {
    expect((await get(`/api/v1/o/corvid/audit`, viewer)).status).toBe(403);
    expect((await get(`/api/v1/o/corvid/audit`, manager)).status).toBe(403);
    expect((await get(`/api/v1/o/corvid/audit`, outsider)).status).toBe(404);
    expect((await get(`/o/corvid/audit`, viewer)).status).toBe(403);
    expect((await get(`/o/corvid/audit`, engineer)).status).toBe(200);
    // Pellworth's log holds none of Corvid's events.
    const theirs = await (await get(`/api/v1/o/pellworth/audit?pageSize=200`, outsider)).json();
    expect(theirs.items.length).toBeGreaterThan(0);
    const corvidIds = new Set((await db().select({ id: auditEvent.id }).from(auditEvent).where(eq(auditEvent.organisationId, zone.organisationId))).map((r) => r.id));
    expect(theirs.items.some((i: { id: string }) => corvidIds.has(i.id))).toBe(false);
  });

  it("records a member's role change with before and after", async () => {
    const person = await createUser(db(), { email: `role-${uniqueSuffix()}@corvid.example`, name: "Role Change" });
    const membership = await addMember(db(), { organisationId: zone.organisationId, userId: person.id, role: "viewer" });
    const response = await postForm("/o/corvid/team", { intent: "change-role", memberId: membership.id, role: "engineer" }, admin);
    expect(response.status).toBe(200);
    const [row] = await db()
      .select()
      .from(auditEvent)
      .where(and(eq(auditEvent.organisationId, zone.organisationId), eq(auditEvent.action, "member.role_changed"), eq(auditEvent.targetId, membership.id)));
    expect(row!.before).toEqual({ userId: person.id, role: "viewer" });
    expect(row!.after).toEqual({ userId: person.id, role: "engineer" });
    expect(row!.actor).toBe(await userId("admin@corvid.example"));
  });
});
