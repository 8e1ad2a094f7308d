// Releases end to end against the running app: the server's refusals, a release whose gains
// make the simulated loops oscillate holding itself within its guard window (with an e-mail),
// roll back to the previous gains under a higher version acknowledged by the devices, and a
// healthy release widening after its guard and completing. The device side is the fleet
// simulator's own code (config-sync, config-verifier, LoopSim); the job step is called directly.
import { and, eq, sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { billingAccount, gainSet, loop, loopTemplate, release } from "~/.server/db/schema";
import { advanceRelease } from "~/.server/releases/releases";
import { syncConfig } from "../../scripts/simulator/config-sync";
import { decideLoops, pinJwks, verifyConfig, type PinnedJwks } from "../../scripts/simulator/config-verifier";
import { createDeviceIdentity, DeviceClient } from "../../scripts/simulator/device-client";
import { ageingFor, LoopSim } from "../../scripts/simulator/plants";
import { assignSite, createTeam, createTestFleet } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, get, inbox, postForm, postJson, signIn, type Session } from "../support/http";

type Fleet = Awaited<ReturnType<typeof createTestFleet>>;
type Device = { client: DeviceClient; pin: PinnedJwks; applied: Map<string, number>; etag?: string; sim: LoopSim; seq: number };

let team: Awaited<ReturnType<typeof createTeam>>;
let other: Awaited<ReturnType<typeof createTeam>>;
let fleet: Fleet;
let slug: string;
let speedTemplateId: string;
const sessions: Record<string, Session> = {};
const devices: Device[] = [];
const DEFAULT_SPEED = { kp: 3, ki: 2, kd: 0 };

async function insertGainSet(state: "approved" | "proposed", version: number, gains: { kp: number; ki: number; kd: number }) {
  const [row] = await db()
    .insert(gainSet)
    .values({ organisationId: team.organisation.id, loopTemplateId: speedTemplateId, version, state, gains, origin: { rule: null, controller: null, model: null, figures: {} }, createdBy: team.people[1].id })
    .returning({ id: gainSet.id });
  return row.id;
}

async function speedLoops() {
  return db()
    .select({ id: loop.id, machineId: loop.machineId, configVersion: loop.configVersion, gains: loop.gains, gainSetId: loop.gainSetId, appliedVersion: loop.appliedVersion, appliedGainSetId: loop.appliedGainSetId })
    .from(loop)
    .where(and(eq(loop.organisationId, team.organisation.id), eq(loop.templateId, speedTemplateId)));
}

const body = (gainSetId: string, over: Record<string, unknown> = {}) => ({
  gainSetId,
  target: { all: true },
  pilot: { machineIds: [fleet.machines[0].id, fleet.machines[1].id] },
  guard: { windowMinutes: 1 },
  confirmMachineCount: fleet.machines.length,
  ...over,
});

/** One 60 s window of the device's simulated speed loop, posted as a digest. */
async function postWindow(d: Device, start: Date) {
  const stats = d.sim.run(60, 0);
  d.seq += 1;
  const digest = { loop: "speed", seq: d.seq, windowStart: start.toISOString(), windowEnd: new Date(start.getTime() + 60_000).toISOString(), gainVersion: d.sim.gainVersion, ...stats };
  const response = await d.client.postDigests([digest]);
  expect(response.status).toBe(200);
  expect((await response.json()).accepted).toBe(1);
}

const sync = (d: Device) =>
  syncConfig(d.client, d, (l) => {
    if (l.key === "speed") d.sim.applyGains(l.gains, l.version);
  });

async function releaseView(id: string, who = "engineer") {
  const response = await get(`/api/v1/o/${slug}/releases/${id}`, sessions[who]);
  expect(response.status).toBe(200);
  return response.json();
}

beforeAll(async () => {
  team = await createTeam(db(), ["owner", "engineer", "viewer", "site_manager"]);
  other = await createTeam(db(), ["owner"]);
  slug = team.organisation.slug;
  fleet = await createTestFleet(db(), { organisationId: team.organisation.id, machinesPerSite: 3 });
  await assignSite(db(), { organisationId: team.organisation.id, memberId: team.people[3].memberId, siteId: fleet.sites[0].id });
  // A paying organisation (a trial allows 5 machines; this fleet has 6).
  await db().insert(billingAccount).values({ organisationId: team.organisation.id, plan: "per_machine", status: "active", trialEndsAt: new Date(Date.now() + 86_400_000) }).onConflictDoUpdate({ target: billingAccount.organisationId, set: { plan: "per_machine", status: "active" } });
  const [template] = await db().select().from(loopTemplate).where(and(eq(loopTemplate.organisationId, team.organisation.id), eq(loopTemplate.modelId, fleet.model.id), eq(loopTemplate.key, "speed")));
  speedTemplateId = template.id;
  for (const [i, p] of team.people.entries()) sessions[p.role] = await signIn(p.email);
  sessions.stranger = await signIn(other.people[0].email);
  for (const [i, m] of fleet.machines.entries()) {
    const client = new DeviceClient(APP_URL, await createDeviceIdentity("EdDSA"));
    const enrol = await client.enrol(m.enrolmentCode, "1.0.0");
    expect(enrol.status).toBe(201);
    const { jwksUrl } = await enrol.json();
    const pin = await pinJwks(new URL(jwksUrl, APP_URL).href);
    const sim = new LoopSim({ key: "speed", samplePeriodS: template.samplePeriodS, outputMin: template.outputMin, outputMax: template.outputMax, thresholds: template.thresholds }, DEFAULT_SPEED, ageingFor(m.serial, i + 1), 1000 + i);
    const d: Device = { client, pin, applied: new Map(), sim, seq: 0 };
    await sync(d); // applies the template defaults at version 1
    devices.push(d);
  }
  // Half an hour of baseline before any release: three windows per pilot machine.
  for (const d of devices.slice(0, 2)) for (const m of [40, 30, 20]) await postWindow(d, new Date(Date.now() - m * 60_000));
});
afterAll(closeDb);

describe("the server refuses, with nothing changed", () => {
  it("a set that is not approved (409), a viewer or site manager (403), a wrong machine count (400), another organisation (404)", async () => {
    const proposed = await insertGainSet("proposed", 1, { kp: 3.1, ki: 2, kd: 0 });
    const approved = await insertGainSet("approved", 2, { kp: 3.2, ki: 2, kd: 0 });
    const before = await speedLoops();
    const cases: [string, unknown, string, number, string][] = [
      ["not approved", body(proposed), "engineer", 409, "not_approved"],
      ["viewer", body(approved), "viewer", 403, "forbidden"],
      ["site manager", body(approved), "site_manager", 403, "forbidden"],
      ["count mismatch", body(approved, { confirmMachineCount: fleet.machines.length - 1 }), "engineer", 400, "confirm_count_mismatch"],
      ["window too long", body(approved, { guard: { windowMinutes: 10081 } }), "engineer", 400, "invalid_body"],
      ["pilot outside the target", body(approved, { target: { machineIds: [fleet.machines[2].id] }, confirmMachineCount: 1 }), "engineer", 400, "invalid_pilot"],
    ];
    for (const [name, payload, who, status, code] of cases) {
      const response = await postJson(`/api/v1/o/${slug}/releases`, payload, sessions[who]);
      expect(response.status, name).toBe(status);
      expect((await response.json()).error.code, name).toBe(code);
    }
    const stranger = await postJson(`/api/v1/o/${slug}/releases`, body(approved), sessions.stranger);
    expect(stranger.status).toBe(404);
    expect(await db().select().from(release).where(eq(release.organisationId, team.organisation.id))).toEqual([]);
    expect(await speedLoops()).toEqual(before);
    const [set] = await db().select({ state: gainSet.state }).from(gainSet).where(eq(gainSet.id, approved));
    expect(set.state).toBe("approved");
    // Reading is for the organisation's OEM side only.
    expect((await get(`/api/v1/o/${slug}/releases`, sessions.site_manager)).status).toBe(403);
    expect((await get(`/api/v1/o/${slug}/releases`, sessions.stranger)).status).toBe(404);
    // Leave the approved set for nobody: retire it so later tests pick their own.
    await db().update(gainSet).set({ state: "retired" }).where(eq(gainSet.id, approved));
  });
});

describe("a release whose gains make the loops oscillate", () => {
  let releaseId: string;
  let oldJws: string;

  it("holds itself within its guard window and e-mails its engineers", async () => {
    const oscillating = await insertGainSet("approved", 3, { kp: 20, ki: 12, kd: 0 });
    const created = await postJson(`/api/v1/o/${slug}/releases`, body(oscillating), sessions.engineer);
    expect(created.status).toBe(201);
    const { id, state } = await created.json();
    releaseId = id;
    expect(state).toBe("piloting");
    let view = await releaseView(id);
    expect(view.waves).toEqual([
      { index: 0, state: "offered", counts: { pending: 0, offered: 2, applied: 0, rejected: 0 } },
      { index: 1, state: "pending", counts: { pending: 4, offered: 0, applied: 0, rejected: 0 } },
    ]);
    // The two pilot devices pull, verify, apply bumplessly and acknowledge.
    for (const d of devices.slice(0, 2)) {
      const result = await sync(d);
      expect(result.status).toBe("done");
      expect(d.sim.gainVersion).toBe(2);
    }
    // Keep the JWS the first pilot received, for the replay below.
    oldJws = await (await devices[0].client.getConfig()).text();
    view = await releaseView(id);
    expect(view.waves[0].counts).toEqual({ pending: 0, offered: 0, applied: 2, rejected: 0 });
    expect(view.targets.filter((t: { wave: number }) => t.wave === 0).every((t: { state: string; version: number }) => t.state === "applied" && t.version === 2)).toBe(true);
    // The loops run the new gains: their digests say so by gainVersion.
    for (const d of devices.slice(0, 2)) for (let k = 0; k < 3; k++) await postWindow(d, new Date(Date.now() - 30_000 + k * 60_000));
    const [row] = await db().select().from(release).where(eq(release.id, id));
    await advanceRelease(db(), { organisationId: team.organisation.id, releaseId: id, now: new Date(row.startedAt!.getTime() + 30_000) });
    view = await releaseView(id);
    expect(view.state).toBe("held");
    expect(view.heldReason).toMatch(/median IAE ratio/);
    expect(view.figures.pilotMedian).toBeGreaterThan(1.2);
    expect(view.figures.pilotRatios).toBe(2);
    expect(view.waves[1].counts.pending).toBe(4); // nothing more offered
    const mail = await inbox(team.people[1].email);
    expect(mail.some((m) => /held/.test(m.subject) && (m.text ?? "").includes(`/o/${slug}/releases/${id}`))).toBe(true);
  });

  it("a held release does not widen when its window has passed", async () => {
    const [row] = await db().select().from(release).where(eq(release.id, releaseId));
    await advanceRelease(db(), { organisationId: team.organisation.id, releaseId, now: new Date(row.guardEndsAt!.getTime() + 60_000) });
    expect((await releaseView(releaseId)).state).toBe("held");
  });

  it("roll back offers every applied loop its previous gains as a new, higher version, and the devices acknowledge it", async () => {
    expect((await postJson(`/api/v1/o/${slug}/releases/${releaseId}/rollback`, {}, sessions.viewer)).status).toBe(403);
    const response = await postJson(`/api/v1/o/${slug}/releases/${releaseId}/rollback`, {}, sessions.engineer);
    expect(response.status).toBe(200);
    const view = await response.json();
    expect(view.state).toBe("rolled_back");
    const pilot = view.targets.filter((t: { wave: number }) => t.wave === 0);
    expect(pilot.map((t: { rollback: unknown }) => t.rollback)).toEqual([
      { state: "offered", version: 3 },
      { state: "offered", version: 3 },
    ]);
    const loops = await speedLoops();
    for (const l of loops) {
      const isPilot = [fleet.machines[0].id, fleet.machines[1].id].includes(l.machineId);
      expect(l.configVersion).toBe(isPilot ? 3 : 1);
      expect(l.gains).toEqual(DEFAULT_SPEED);
      expect(l.gainSetId).toBeNull();
    }
    for (const d of devices.slice(0, 2)) {
      await sync(d);
      expect(d.sim.gainVersion).toBe(3);
    }
    const after = await releaseView(releaseId);
    expect(after.targets.filter((t: { wave: number }) => t.wave === 0).map((t: { rollback: { state: string } }) => t.rollback.state)).toEqual(["applied", "applied"]);
    for (const l of (await speedLoops()).filter((l) => [fleet.machines[0].id, fleet.machines[1].id].includes(l.machineId))) {
      expect(l.appliedVersion).toBe(3);
      expect(l.appliedGainSetId).toBeNull();
    }
  });

  it("the device refuses the older configuration replayed to it, and says so", async () => {
    const d = devices[0];
    const config = await verifyConfig(oldJws, d.pin, d.client.deviceId);
    const decisions = decideLoops(config, d.applied);
    const speed = decisions.find((x) => x.key === "speed")!;
    expect(speed).toMatchObject({ action: "refuse", reason: "version 2 is lower than the applied version 3" });
    const ack = await d.client.ack({ loop: "speed", version: 2, status: "rejected", reason: (speed as { reason: string }).reason });
    expect(ack.status).toBe(200);
    // The release's record of that loop is untouched by the stale rejection.
    const view = await releaseView(releaseId);
    expect(view.targets.find((t: { machineId: string }) => t.machineId === fleet.machines[0].id).state).toBe("applied");
    // And a configuration addressed to another device is refused.
    await expect(verifyConfig(oldJws, d.pin, devices[1].client.deviceId)).rejects.toMatchObject({ code: "wrong_audience" });
  });
});

describe("a healthy release", () => {
  it("widens after its guard window, and completes when every target applied", async () => {
    const healthy = await insertGainSet("approved", 4, { kp: 3.3, ki: 2.1, kd: 0 });
    const created = await postJson(`/api/v1/o/${slug}/releases`, body(healthy), sessions.engineer);
    expect(created.status).toBe(201);
    const { id } = await created.json();
    for (const d of devices.slice(0, 2)) await sync(d);
    for (const d of devices.slice(0, 2)) await postWindow(d, new Date(Date.now() - 20_000));
    const [row] = await db().select().from(release).where(eq(release.id, id));
    // Within the window: still piloting.
    await advanceRelease(db(), { organisationId: team.organisation.id, releaseId: id, now: new Date(row.startedAt!.getTime() + 10_000) });
    expect((await releaseView(id)).state).toBe("piloting");
    // A manual hold and resume by an engineer; a viewer may not.
    expect((await postJson(`/api/v1/o/${slug}/releases/${id}/hold`, { reason: "checking" }, sessions.viewer)).status).toBe(403);
    const held = await postJson(`/api/v1/o/${slug}/releases/${id}/hold`, { reason: "checking the plant first" }, sessions.engineer);
    expect(held.status).toBe(200);
    expect((await held.json()).heldReason).toMatch(/checking the plant first/);
    // Resume = widen now, the engineer accepting the figures.
    const resumed = await postJson(`/api/v1/o/${slug}/releases/${id}/resume`, {}, sessions.engineer);
    expect(resumed.status).toBe(200);
    const view = await resumed.json();
    expect(view.state).toBe("widening");
    expect(view.waves[1]).toEqual({ index: 1, state: "offered", counts: { pending: 0, offered: 4, applied: 0, rejected: 0 } });
    for (const d of devices) await sync(d);
    await advanceRelease(db(), { organisationId: team.organisation.id, releaseId: id });
    const done = await releaseView(id);
    expect(done.state).toBe("complete");
    expect(done.targets).toHaveLength(6);
    expect(done.targets.every((t: { state: string }) => t.state === "applied")).toBe(true);
    const list = await (await get(`/api/v1/o/${slug}/releases?pageSize=10`, sessions.viewer)).json();
    expect(list).toMatchObject({ total: 2, page: 1, pageSize: 10 });
    expect(list.items[0]).toMatchObject({ id, state: "complete", applied: 6, loops: 6 });
  });

  it("widens by itself once the guard window has passed without a hold", async () => {
    const next = await insertGainSet("approved", 5, { kp: 3.4, ki: 2.1, kd: 0 });
    const created = await postJson(`/api/v1/o/${slug}/releases`, body(next, { pilot: { share: 0.3 } }), sessions.engineer);
    expect(created.status).toBe(201);
    const { id } = await created.json();
    let view = await releaseView(id);
    const pilotMachines = [...new Set(view.targets.filter((t: { wave: number }) => t.wave === 0).map((t: { machineId: string }) => t.machineId))];
    expect(pilotMachines).toHaveLength(2); // ceil(0.3 × 6)
    for (const d of devices) if (pilotMachines.includes(d.client.identity.machineId)) await sync(d);
    const [row] = await db().select().from(release).where(eq(release.id, id));
    await advanceRelease(db(), { organisationId: team.organisation.id, releaseId: id, now: new Date(row.guardEndsAt!.getTime() + 1000) });
    view = await releaseView(id);
    expect(view.state).toBe("widening");
    for (const d of devices) await sync(d);
    await advanceRelease(db(), { organisationId: team.organisation.id, releaseId: id });
    expect((await releaseView(id)).state).toBe("complete");
    const audit = await db().execute<{ action: string }>(sql`select action from audit_event where organisation_id = ${team.organisation.id} and target_id = ${id} order by created_at`);
    expect(audit.rows.map((r) => r.action)).toEqual(["release.created", "release.wave_offered", "release.wave_offered", "release.completed"]);
  });
});

describe("pilot devices that reject", () => {
  it("hold the release when more than the allowed share reject, and each refusal opens a config_rejected finding", async () => {
    const set = await insertGainSet("approved", 6, { kp: 3.5, ki: 2.2, kd: 0 });
    const created = await postJson(`/api/v1/o/${slug}/releases`, body(set), sessions.engineer);
    expect(created.status).toBe(201);
    const { id } = await created.json();
    await sync(devices[0]);
    // The second pilot device refuses what it was offered.
    const [offered] = (await releaseView(id)).targets.filter((t: { machineId: string }) => t.machineId === fleet.machines[1].id);
    const ack = await devices[1].client.ack({ loop: "speed", version: offered.version, status: "rejected", reason: "gains outside this drive's limits" });
    expect(ack.status).toBe(200);
    const findings = await db().execute<{ kind: string; severity: string }>(sql`select kind, severity from finding where organisation_id = ${team.organisation.id} and loop_id = ${offered.loopId}::uuid and state = 'open'`);
    expect(findings.rows).toEqual([{ kind: "config_rejected", severity: "critical" }]);
    await advanceRelease(db(), { organisationId: team.organisation.id, releaseId: id });
    const view = await releaseView(id);
    expect(view.state).toBe("held");
    expect(view.heldReason).toMatch(/1 of 2 pilot devices \(50 %\) rejected the configuration/);
    expect(view.targets.find((t: { machineId: string }) => t.machineId === fleet.machines[1].id)).toMatchObject({ state: "rejected", rejectReason: "gains outside this drive's limits" });

    // The page's commands check the role and the organisation themselves.
    const before = await speedLoops();
    for (const [who, status] of [["viewer", 403], ["site_manager", 403], ["stranger", 404]] as const) {
      for (const intent of ["resume", "rollback"]) {
        const response = await postForm(`/o/${slug}/releases/${id}`, { intent }, sessions[who]);
        expect(response.status, `${who} ${intent}`).toBe(status);
      }
    }
    expect((await releaseView(id)).state).toBe("held");
    expect(await speedLoops()).toEqual(before);
    const rolled = await postForm(`/o/${slug}/releases/${id}`, { intent: "rollback" }, sessions.engineer);
    expect(rolled.status).toBe(200);
    expect((await releaseView(id)).state).toBe("rolled_back");
  });
});

