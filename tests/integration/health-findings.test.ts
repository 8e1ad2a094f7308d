// Loop health end to end: digests through the device API keep the hourly rollups, the
// evaluation job (its handler's work, run directly with a database handle) opens findings, and
// the alert job e-mails them to the inbox fake: once per finding and recipient whatever the
// retries, one summary for a burst, never again after the unsubscribe link.
import { sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { deliverAlerts } from "~/.server/health/alerts";
import { evaluateMachineHealth } from "~/.server/health/evaluate";
import { DEMO_FLEETS } from "../../scripts/seed/demo-data";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { ageingFor, LoopSim } from "../../scripts/simulator/plants";
import { createCustomer, createMachine, createMachineModel, createSite, createTeam, createTestFleet, uniqueSuffix } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, inbox } from "../support/http";

afterAll(closeDb);

const HOUR = 3_600_000;
const DAY = 24 * HOUR;

async function enrol(enrolmentCode: string) {
  const client = new DeviceClient(APP_URL, await createDeviceIdentity("EdDSA"));
  const response = await client.enrol(enrolmentCode, "1.0.0");
  expect(response.status).toBe(201);
  return client;
}

async function post(client: DeviceClient, digests: unknown[], batch = 500) {
  for (let i = 0; i < digests.length; i += batch) {
    const response = await client.postDigests(digests.slice(i, i + batch));
    expect(response.status).toBe(200);
    const body = await response.json();
    expect(body.rejected).toEqual([]);
  }
}

type FindingRow = { id: string; kind: string; severity: string; state: string; summary: string; evidence: { metric: string; value: number | null; threshold: number | null } };
async function findingsOf(organisationId: string, machineId: string): Promise<FindingRow[]> {
  return (await db().execute<FindingRow>(sql`select id, kind, severity, state, summary, evidence from finding where organisation_id = ${organisationId} and machine_id = ${machineId}::uuid order by kind`)).rows;
}

describe("the simulator's heater-wear line", () => {
  let team: Awaited<ReturnType<typeof createTeam>>;
  let machineId: string;
  let serial: string;
  const now = new Date();
  const engineerEmail = () => team.people.find((p) => p.role === "engineer")!.email;

  beforeAll(async () => {
    team = await createTeam(db(), ["owner", "engineer", "viewer"]);
    const organisationId = team.organisation.id;
    const zone = DEMO_FLEETS.corvid.model.templates[0];
    // The backfill sends one window an hour, so this template expects a digest an hour.
    const model = await createMachineModel(db(), { organisationId, name: `Line ${uniqueSuffix()}`, templates: [{ ...zone, thresholds: { ...zone.thresholds, expectedDigestIntervalS: 3600 } as never }] });
    const buyer = await createCustomer(db(), { organisationId, name: `Buyer ${uniqueSuffix()}` });
    const site = await createSite(db(), { organisationId, customerId: buyer.id, name: "Works" });
    const machine = await createMachine(db(), { organisationId, modelId: model.id, siteId: site.id });
    machineId = machine.id;
    serial = machine.serial;
    const client = await enrol(machine.enrolmentCode);
    // 30 days of the simulator's backfill for the wear line (index % 7 === 3), as scripts/simulate.ts sends it.
    const sim = new LoopSim({ key: zone.key, samplePeriodS: zone.samplePeriodS, outputMin: zone.outputMin, outputMax: zone.outputMax, thresholds: zone.thresholds as never }, zone.defaultGains, ageingFor(serial, 3), 3 * 97 + 1);
    const origin = Math.floor((now.getTime() - 30 * DAY) / HOUR) * HOUR;
    const digests = [];
    for (let t = origin; t + 60_000 <= now.getTime(); t += HOUR) {
      const stats = sim.run(60, (t - origin) / DAY);
      digests.push({ loop: zone.key, seq: Math.floor(t / 60_000), windowStart: new Date(t).toISOString(), windowEnd: new Date(t + 60_000).toISOString(), gainVersion: sim.gainVersion, ...stats });
    }
    await post(client, digests);
  }, 120_000);

  it("keeps one hourly rollup per window and raises a saturation finding at the act limit", async () => {
    const organisationId = team.organisation.id;
    const [rollup] = (
      await db().execute<{ hours: number; digests: number }>(sql`
        select count(*)::int as hours, sum(h.digests)::int as digests from loop_hour h join loop l on l.organisation_id = h.organisation_id and l.id = h.loop_id
        where h.organisation_id = ${organisationId} and l.machine_id = ${machineId}::uuid`)
    ).rows;
    expect(rollup.hours).toBeGreaterThanOrEqual(719);
    expect(rollup.digests).toBe(rollup.hours);

    const result = await evaluateMachineHealth(db(), { organisationId, machineId, now });
    expect(result.opened).toBeGreaterThan(0);
    const saturation = (await findingsOf(organisationId, machineId)).find((f) => f.kind === "saturation");
    expect(saturation).toMatchObject({ state: "open", severity: "critical", evidence: { metric: "saturation.share24h", threshold: 0.2 } });
    expect(saturation!.evidence.value).toBeGreaterThanOrEqual(0.2);

    // Evaluating again changes nothing: still one open saturation finding, no new history.
    const again = await evaluateMachineHealth(db(), { organisationId, machineId, now });
    expect(again.opened).toBe(0);
    const events = await db().execute<{ n: number }>(sql`select count(*)::int as n from finding_event where organisation_id = ${organisationId} and finding_id = ${saturation!.id}::uuid`);
    expect(events.rows[0].n).toBe(1);
    // The loop's band, figures and daily snapshots are kept too.
    const [loopRow] = (await db().execute<{ health_band: string; days: number; figures: unknown }>(sql`
      select l.health_band, (select count(*)::int from loop_health_day d where d.organisation_id = l.organisation_id and d.loop_id = l.id) as days,
             (select figures from loop_health h where h.organisation_id = l.organisation_id and h.loop_id = l.id) as figures
      from loop l where l.organisation_id = ${organisationId} and l.machine_id = ${machineId}::uuid`)).rows;
    expect(loopRow.health_band).toBe("act");
    expect(loopRow.days).toBeGreaterThanOrEqual(30);
    expect(loopRow.figures).toMatchObject({ saturation: { share24h: expect.any(Number) } });
  });

  it("e-mails the finding to the engineer once, however often the alert job runs", async () => {
    const organisationId = team.organisation.id;
    const before = (await inbox(engineerEmail())).length;
    await deliverAlerts(db(), { organisationId });
    const mail = await inbox(engineerEmail());
    expect(mail.length).toBe(before + 1);
    // Saturation comes with its consequences (the integrator held, the error drifting): one e-mail for all.
    const kinds = (await findingsOf(organisationId, machineId)).map((f) => f.kind);
    expect(kinds).toContain("saturation");
    expect(mail[0].subject).toMatch(kinds.length === 1 ? /^Critical: saturation on / : new RegExp(`^${kinds.length} new findings in .*critical`));
    expect(mail[0].text).toMatch(new RegExp(`Critical · ${serial} zone_1 \\(Works\\) · saturation: Output at a limit`));
    expect(mail[0].text).toContain(`/findings/`);
    // The viewer's default is no alerts.
    expect(await inbox(team.people.find((p) => p.role === "viewer")!.email)).toHaveLength(0);

    // A retry after a crash before the findings were marked handled: nothing new is sent.
    await db().execute(sql`update finding set alert_pending = 1 where organisation_id = ${organisationId}`);
    await deliverAlerts(db(), { organisationId });
    // A retry after a crash between the send and its record: Resend's idempotency key answers the first message.
    await db().execute(sql`update alert_delivery set status = 'pending' where organisation_id = ${organisationId}`);
    await deliverAlerts(db(), { organisationId });
    expect(await inbox(engineerEmail())).toHaveLength(before + 1);
  });

  it("stops alerts through the e-mail's unsubscribe link, without signing in", async () => {
    const organisationId = team.organisation.id;
    const [message] = await inbox(engineerEmail());
    const link = /https?:\/\/\S+\/unsubscribe\?token=\S+/.exec(message.text ?? "")![0];
    const url = new URL(link);
    const page = await fetch(`${APP_URL}${url.pathname}${url.search}`);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain("Stop alert e-mails");
    const token = url.searchParams.get("token")!;
    const done = await fetch(`${APP_URL}/unsubscribe`, { method: "POST", headers: { "content-type": "application/x-www-form-urlencoded", origin: APP_URL }, body: new URLSearchParams({ token }) });
    expect(done.status).toBeLessThan(400);
    const [sub] = (await db().execute<{ kinds: string[] }>(sql`
      select a.kinds from alert_subscription a join member m on m.organisation_id = a.organisation_id and m.id = a.member_id join "user" u on u.id = m.user_id
      where a.organisation_id = ${organisationId} and u.email = ${engineerEmail()}`)).rows;
    expect(sub.kinds).toEqual([]);
    // A forged token changes nothing.
    const forged = await fetch(`${APP_URL}/unsubscribe`, { method: "POST", headers: { "content-type": "application/x-www-form-urlencoded", origin: APP_URL }, body: new URLSearchParams({ token: `${token.slice(0, -4)}AAAA` }) });
    expect(forged.status).toBe(400);
  });
});

describe("a burst of findings", () => {
  it("gives each recipient one summary e-mail instead of thirty", async () => {
    const team = await createTeam(db(), ["owner", "engineer"]);
    const organisationId = team.organisation.id;
    const fleet = await createTestFleet(db(), { organisationId, machinesPerSite: 8 });
    const loops = (await db().execute<{ id: string; machine_id: string }>(sql`select id, machine_id from loop where organisation_id = ${organisationId} order by machine_id, key`)).rows;
    expect(loops.length).toBeGreaterThanOrEqual(30);
    const at = Date.now();
    for (const [i, l] of loops.slice(0, 30).entries()) {
      await db().execute(sql`
        insert into finding (organisation_id, machine_id, loop_id, kind, severity, state, summary, evidence, opened_at, updated_at, alert_pending)
        values (${organisationId}, ${l.machine_id}::uuid, ${l.id}::uuid, 'oscillation', ${i % 3 === 0 ? "critical" : "warning"}, 'open', ${`Burst ${i}`},
                ${JSON.stringify({ metric: "oscillation.detectionsPerHour", value: 20, threshold: 10, unit: "per hour", windowStart: null, windowEnd: null, figures: {} })}::jsonb,
                ${new Date(at - i * 5_000).toISOString()}::timestamptz, now(), 1)`);
    }
    expect(fleet.machines.length).toBe(16);
    const result = await deliverAlerts(db(), { organisationId });
    expect(result.findings).toBe(30);
    for (const person of team.people) {
      const mail = await inbox(person.email);
      expect(mail).toHaveLength(1);
      expect(mail[0].subject).toMatch(/^30 new findings in .* \(10 critical\)$/);
    }
    await deliverAlerts(db(), { organisationId });
    for (const person of team.people) expect(await inbox(person.email)).toHaveLength(1);
  });
});

describe("arrival order", () => {
  it("gives the same rollups, figures and findings for digests backfilled out of order as in order", async () => {
    const team = await createTeam(db(), ["owner"]);
    const organisationId = team.organisation.id;
    const fleet = await createTestFleet(db(), { organisationId, machinesPerSite: 1 });
    // The template expects a digest an hour (the series below).
    await db().execute(sql`update loop_template set thresholds = thresholds || '{"expectedDigestIntervalS": 3600}'::jsonb where organisation_id = ${organisationId}`);
    const [a, b] = fleet.machines;
    const now = new Date();
    // Ten days of hourly windows: IAE steps up 60 % after day six; saturation climbs.
    let seed = 12345;
    const rand = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
    const start = Math.floor((now.getTime() - 10 * DAY) / HOUR) * HOUR;
    const digests = [];
    for (let t = start, k = 0; t + 60_000 <= now.getTime(); t += HOUR, k++) {
      const late = t > start + 6 * DAY;
      const iae = (late ? 19.2 : 12) * (1 + 0.1 * (rand() - 0.5));
      const sat = Math.min(0.9, 0.0008 * k + 0.02 * rand());
      for (const key of ["temp", "speed"]) digests.push(sampleDigest(key, k, new Date(t), 60, { iae, satHighFrac: sat, intClampFrac: sat / 2, oscCount: k % 5 === 0 ? 1 : 0 }));
    }
    const shuffled = digests.map((d) => ({ d, r: rand() })).sort((x, y) => x.r - y.r).map((x) => x.d);
    await post(await enrol(a.enrolmentCode), digests);
    const clientB = await enrol(b.enrolmentCode);
    await post(clientB, shuffled, 37);
    // A retried batch adds nothing.
    await post(clientB, shuffled.slice(0, 37), 37);

    await evaluateMachineHealth(db(), { organisationId, machineId: a.id, now });
    await evaluateMachineHealth(db(), { organisationId, machineId: b.id, now });
    const rollups = async (machineId: string) =>
      (
        await db().execute(sql`
          select l.key, h.hour, h.digests, h.samples, h.seconds::text, h.iae::text, h.sat_samples::text, h.clamp_samples::text, h.pinned_samples::text, h.err2_samples::text, h.osc_count, h.last_window_end, h.gain_version
          from loop_hour h join loop l on l.organisation_id = h.organisation_id and l.id = h.loop_id
          where h.organisation_id = ${organisationId} and l.machine_id = ${machineId}::uuid order by l.key, h.hour`)
      ).rows;
    const inOrder = await rollups(a.id);
    expect(inOrder.length).toBe(digests.length);
    expect(await rollups(b.id)).toEqual(inOrder);
    const figures = async (machineId: string) =>
      (await db().execute(sql`select l.key, h.figures from loop_health h join loop l on l.organisation_id = h.organisation_id and l.id = h.loop_id where h.organisation_id = ${organisationId} and l.machine_id = ${machineId}::uuid order by l.key`)).rows;
    expect(await figures(b.id)).toEqual(await figures(a.id));
    const judged = async (machineId: string) => (await findingsOf(organisationId, machineId)).map(({ kind, severity, state, summary, evidence }) => ({ kind, severity, state, summary, evidence }));
    const findingsA = await judged(a.id);
    expect(findingsA.map((f) => f.kind)).toEqual(expect.arrayContaining(["drift", "saturation"]));
    expect(await judged(b.id)).toEqual(findingsA);
  }, 60_000);
});

describe("silence", () => {
  it("opens when digests stop for three expected intervals and resolves as soon as one arrives", async () => {
    const team = await createTeam(db(), ["owner", "engineer"]);
    const organisationId = team.organisation.id;
    const zone = DEMO_FLEETS.corvid.model.templates[0];
    const model = await createMachineModel(db(), { organisationId, name: `Quiet ${uniqueSuffix()}`, templates: [{ ...zone, thresholds: { ...zone.thresholds, expectedDigestIntervalS: 60 } as never }] });
    const buyer = await createCustomer(db(), { organisationId, name: `Buyer ${uniqueSuffix()}` });
    const site = await createSite(db(), { organisationId, customerId: buyer.id, name: "Works" });
    const machine = await createMachine(db(), { organisationId, modelId: model.id, siteId: site.id });
    const client = await enrol(machine.enrolmentCode);
    const start = new Date(Date.now() - 2 * HOUR);
    await post(client, Array.from({ length: 10 }, (_, i) => sampleDigest(zone.key, i + 1, new Date(start.getTime() + i * 60_000))));
    // Evaluated an hour after the last window: 60 intervals of silence, far past 3.
    await evaluateMachineHealth(db(), { organisationId, machineId: machine.id });
    const silent = (await findingsOf(organisationId, machine.id)).filter((f) => f.kind === "silent");
    expect(silent).toHaveLength(1);
    expect(silent[0]!.state).toBe("open");
    // A digest arrives: the silence is over beyond doubt, no auto-resolve wait.
    await post(client, [sampleDigest(zone.key, 11, new Date(Date.now() - 60_000))]);
    await evaluateMachineHealth(db(), { organisationId, machineId: machine.id });
    const after = (await findingsOf(organisationId, machine.id)).filter((f) => f.kind === "silent");
    expect(after.map((f) => f.state)).toEqual(["resolved"]);
  });
});
