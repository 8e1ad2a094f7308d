// The worker's jobs (app/.server/jobs/definitions.ts), each handler run directly with a database
// handle and a payload its schema accepted, as scripts/worker.ts does; each twice, since a job
// may run again after a crash or overlap its next schedule.
import { and, asc, eq, inArray, lt, sql } from "drizzle-orm";
import { randomUUID } from "node:crypto";
import { afterAll, describe, expect, it } from "vitest";
import type { Db } from "~/.server/db/client";
import { deviceJti, digest, loop, machine } from "~/.server/db/schema";
import { ensureDigestPartitions, healthJobHooks, JOBS, purgeDeviceJtis, refreshFleetHealth } from "~/.server/jobs/definitions";
import { assessLoopHealth } from "~/lib/health";
import { sampleDigest } from "../../scripts/simulator/device-client";
import { createTeam, createTestFleet, DEFAULT_THRESHOLDS, uniqueSuffix } from "../factories";
import { closeDb, db } from "../support/db";

afterAll(closeDb);
// Alerts are queued through pg-boss in the worker; here they are only counted.
const alertsQueued: string[] = [];
healthJobHooks.alertsPending = async (organisationId) => void alertsQueued.push(organisationId);

type CronJob = typeof ensureDigestPartitions | typeof purgeDeviceJtis | typeof refreshFleetHealth;
async function run(job: CronJob, handle: Db = db()) {
  await job.handler(handle, job.schema.parse({}));
}

it("lists every job tested here", () => {
  // The billing jobs are tested in billing-webhooks.test.ts and billing-quantity.test.ts.
  expect(JOBS.map((j) => j.name).sort()).toEqual(["billing.apply-stripe-event", "billing.sync-quantity", "device.purge-jtis", "device.withdraw-signing-keys", "fleet.ensure-digest-partitions", "fleet.refresh-health", "health.deliver-alerts", "health.evaluate-machine", "health.sweep", "release.advance"]);
});

describe("device.purge-jtis", () => {
  it("removes the jtis whose tokens have expired and keeps the live ones", async () => {
    const { organisation } = await createTeam(db());
    const deviceId = randomUUID();
    const suffix = uniqueSuffix();
    const at = (seconds: number) => new Date(Date.now() + seconds * 1000);
    // [jti, expires in seconds (negative: already expired), kept]
    const rows: [string, number, boolean][] = [
      [`long-gone-${suffix}`, -86_400, false],
      [`just-expired-${suffix}`, -5, false],
      [`about-to-expire-${suffix}`, 30, true],
      [`fresh-${suffix}`, 360, true],
    ];
    await db().insert(deviceJti).values(rows.map(([jti, seconds]) => ({ organisationId: organisation.id, deviceId, jti, expiresAt: at(seconds) })));
    const left = async () => (await db().select({ jti: deviceJti.jti }).from(deviceJti).where(eq(deviceJti.deviceId, deviceId)).orderBy(asc(deviceJti.jti))).map((r) => r.jti);
    const kept = rows.filter(([, , keep]) => keep).map(([jti]) => jti).sort();

    await run(purgeDeviceJtis);
    expect(await left()).toEqual(kept);
    const cutoff = new Date();
    await run(purgeDeviceJtis);
    expect(await left()).toEqual(kept);
    // Nor does any other device keep a jti that had expired before the run.
    const [expired] = await db().select({ n: sql<number>`count(*)::int` }).from(deviceJti).where(lt(deviceJti.expiresAt, cutoff));
    expect(expired.n).toBe(0);
  });
});

describe("fleet.ensure-digest-partitions", () => {
  type Partition = { name: string; bound: string };
  const partitions = async (tx: Db) =>
    (
      await tx.execute<Partition>(sql`
        select c.relname as name, pg_get_expr(c.relpartbound, c.oid) as bound
        from pg_inherits i join pg_class c on c.oid = i.inhrelid join pg_class p on p.oid = i.inhparent
        where p.relname = 'digest' order by c.relname`)
    ).rows;

  it("creates this month and the next three when they are missing, and a second run changes nothing", async () => {
    // In a transaction that is rolled back: the test drops the months ahead (empty: digests are
    // never accepted that far in the future) and leaves the database as it found it.
    const rolledBack = db().transaction(async (tx) => {
      const ahead = (
        await tx.execute<{ name: string; from_ts: string; to_ts: string }>(sql`
          select to_char(m, '"digest_y"YYYY"m"MM') as name, to_char(m, 'YYYY-MM-DD') as from_ts, to_char(m + interval '1 month', 'YYYY-MM-DD') as to_ts
          from generate_series(date_trunc('month', now()::date), date_trunc('month', now()::date) + interval '3 months', interval '1 month') as m`)
      ).rows;
      expect(ahead).toHaveLength(4);
      for (const month of ahead.slice(1)) await tx.execute(sql.raw(`drop table if exists ${month.name}`));
      const names = async () => (await partitions(tx)).map((p) => p.name);
      expect(await names()).not.toContain(ahead[3].name);

      await run(ensureDigestPartitions, tx);
      const after = await partitions(tx);
      for (const month of ahead) {
        const made = after.find((p) => p.name === month.name);
        expect(made, month.name).toBeDefined();
        expect(made!.bound).toContain(`'${month.from_ts} 00:00:00+00'`);
        expect(made!.bound).toContain(`'${month.to_ts} 00:00:00+00'`);
      }

      await run(ensureDigestPartitions, tx);
      expect(await partitions(tx)).toEqual(after);
      tx.rollback();
    });
    await expect(rolledBack).rejects.toThrow(/rollback/i);
  });
});

describe("fleet.refresh-health", () => {
  it("reassesses the loops of active machines seen in the last 10 minutes from their digests, and no others", async () => {
    const { organisation } = await createTeam(db());
    const organisationId = organisation.id;
    const fleet = await createTestFleet(db(), { organisationId, machinesPerSite: 2 });
    const [seen, quiet, longAgo, decommissioned] = fleet.machines;
    const minutesAgo = (m: number) => new Date(Date.now() - m * 60_000);
    await db().update(machine).set({ lastSeenAt: minutesAgo(1) }).where(inArray(machine.id, [seen.id, decommissioned.id]));
    await db().update(machine).set({ lastSeenAt: minutesAgo(30) }).where(eq(machine.id, longAgo.id));
    await db().update(machine).set({ status: "decommissioned", decommissionedAt: new Date() }).where(eq(machine.id, decommissioned.id));

    // Five minutes of a saturating temperature loop on every machine, written straight to the
    // table: the app's ingest would refresh health itself and hide what the job does.
    const windows = [6, 5, 4, 3, 2].map((m) => sampleDigest("temp", 100 - m, minutesAgo(m), 60, { satHighFrac: 0.5 }));
    const loops = await db().select({ id: loop.id, machineId: loop.machineId }).from(loop).where(and(eq(loop.organisationId, organisationId), eq(loop.key, "temp")));
    for (const l of loops) {
      await db()
        .insert(digest)
        .values(windows.map(({ loop: _, windowStart, windowEnd, ...d }) => ({ ...d, organisationId, loopId: l.id, windowStart: new Date(windowStart), windowEnd: new Date(windowEnd) })));
    }
    const health = async (machineId: string) =>
      (await db().select({ key: loop.key, band: loop.healthBand, score: loop.healthScore, reasons: loop.healthReasons, lastDigestAt: loop.lastDigestAt }).from(loop).where(and(eq(loop.organisationId, organisationId), eq(loop.machineId, machineId))).orderBy(asc(loop.key)));
    const untouched = [
      { key: "speed", band: null, score: null, reasons: [], lastDigestAt: null },
      { key: "temp", band: null, score: null, reasons: [], lastDigestAt: null },
    ];
    for (const m of fleet.machines) expect(await health(m.id)).toEqual(untouched);

    await run(refreshFleetHealth);
    const lastEnd = new Date(windows.at(-1)!.windowEnd);
    const expected = assessLoopHealth(
      windows.map((d) => ({ ...d, windowStart: new Date(d.windowStart), windowEnd: new Date(d.windowEnd) })),
      DEFAULT_THRESHOLDS,
      lastEnd,
    );
    expect(expected.reasons.join(" ")).toContain("Output saturated 50 %");
    const refreshed = [
      { key: "speed", band: null, score: null, reasons: [], lastDigestAt: null },
      { key: "temp", band: expected.band, score: expected.score, reasons: expected.reasons, lastDigestAt: lastEnd },
    ];
    expect(await health(seen.id)).toEqual(refreshed);
    for (const m of [quiet, longAgo, decommissioned]) expect(await health(m.id)).toEqual(untouched);

    await run(refreshFleetHealth);
    expect(await health(seen.id)).toEqual(refreshed);
  });
});
