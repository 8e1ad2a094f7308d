// Overview bench: a fresh PostgreSQL with 500 machines × 6 loops × 30 days of hourly digests
// (about 2.2 million rows, written with generate_series) and their hourly rollups built by the
// same aggregate the device_ingest statement adds per digest; every machine evaluated once (the
// evaluation job's work: figures, findings, daily snapshots). Then the overview loader
// (getOverview) 50 times against a hand-written SQL query of the same aggregates run with `pg`,
// alternating; and the evaluation lag while digests arrive at the ingest bench's rate.
// Prints figures; asserts nothing.
//   npm run bench   (env: BENCH_MACHINES=500 BENCH_DAYS=30 BENCH_INGEST_RATE=14000 BENCH_LIVE_SECONDS=20)
import { execFileSync } from "node:child_process";
import { randomBytes } from "node:crypto";
import path from "node:path";
import { fileURLToPath } from "node:url";
import pg from "pg";

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "../..");
const PG_PORT = Number(process.env.BENCH_PG_PORT ?? 54391);
const MACHINES = Number(process.env.BENCH_MACHINES ?? 500);
const DAYS = Number(process.env.BENCH_DAYS ?? 30);
const REQUESTS = 50;
/** Digests per second the ingest bench's app sustained in batches of 50 (its figure, measured on this box). */
const INGEST_RATE = Number(process.env.BENCH_INGEST_RATE ?? 14_000);
const LIVE_SECONDS = Number(process.env.BENCH_LIVE_SECONDS ?? 20);
const DATA = path.join(ROOT, "data/bench-overview-postgres");
const DATABASE_URL = `postgres://flyball@127.0.0.1:${PG_PORT}/flyball`;
process.env.DATABASE_URL = DATABASE_URL;
process.env.BETTER_AUTH_SECRET ??= "bench-secret-not-for-production-0123456789abcdef";
// A throwaway key-encryption key for the bench's own database (scripts/bench/run.sh sets one too).
process.env.FLYBALL_KEY_ENCRYPTION_KEY ??= randomBytes(32).toString("base64url");

const sh = (script: string) => execFileSync("bash", ["-c", `cd ${ROOT} && source scripts/lib/postgres.sh && ${script}`], { stdio: "inherit" });
const pct = (sorted: number[], p: number) => sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))];
const ms = (v: number) => v.toFixed(1);

/** The rollup aggregate of device_ingest (app/.server/device-api/ingest.ts), over a set of digest rows `a`. */
const ROLLUP_SELECT = `
  select organisation_id, loop_id, hour, count(*), sum(samples), sum(extract(epoch from window_end - window_start)), sum(iae::numeric),
         sum(sat::numeric * samples), sum(int_clamp_frac::numeric * samples), sum(least(int_clamp_frac, sat)::numeric * samples),
         sum((err_rms * err_rms)::numeric * samples), sum(osc_count), max(window_end), max(gain_version)
  from (select a.*, date_bin('1 hour', a.window_start, timestamptz '2000-01-01 00:00:00+00') as hour, least(1, a.sat_high_frac + a.sat_low_frac) as sat from %ROWS% a) x
  group by organisation_id, loop_id, hour
  order by organisation_id, loop_id, hour`;
const ROLLUP_UPSERT = `
  on conflict (organisation_id, loop_id, hour) do update set
    digests = h.digests + excluded.digests, samples = h.samples + excluded.samples, seconds = h.seconds + excluded.seconds,
    iae = h.iae + excluded.iae, sat_samples = h.sat_samples + excluded.sat_samples, clamp_samples = h.clamp_samples + excluded.clamp_samples,
    pinned_samples = h.pinned_samples + excluded.pinned_samples, err2_samples = h.err2_samples + excluded.err2_samples,
    osc_count = h.osc_count + excluded.osc_count, last_window_end = greatest(h.last_window_end, excluded.last_window_end),
    gain_version = greatest(h.gain_version, excluded.gain_version)`;
const ROLLUP_COLUMNS = "organisation_id, loop_id, hour, digests, samples, seconds, iae, sat_samples, clamp_samples, pinned_samples, err2_samples, osc_count, last_window_end, gain_version";

/** The hand-written query: the same aggregates as getOverview for the whole organisation, in one statement. */
const HAND_WRITTEN = `
with ranked as materialized (
  select m.id as machine_id, m.serial, l.key, l.health_score, l.health_reasons,
         case when l.last_digest_at is null or l.last_digest_at < now() - make_interval(secs => coalesce((t.thresholds->>'silentAfter')::float8, 900)) then 3
              when l.health_band = 'act' then 2 when l.health_band = 'watch' then 1 when l.health_band = 'steady' then 0 else 3 end as rank
  from machine m join loop l on l.organisation_id = m.organisation_id and l.machine_id = m.id
  join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
  where m.organisation_id = $1 and m.status = 'active'
), per_machine as (
  select distinct on (machine_id) machine_id, serial, rank, key, health_score, health_reasons from ranked order by machine_id, rank desc, health_score asc nulls last, key
)
select
  (select json_agg(x) from (select rank, count(*) as n from ranked group by rank) x) as loops,
  (select json_agg(x) from (select rank, count(*) as n from per_machine group by rank) x) as machines,
  (select json_agg(x) from (select kind, severity, count(*) as n from finding where organisation_id = $1 and state in ('open', 'acknowledged') group by kind, severity) x) as findings,
  (select json_agg(x) from (select machine_id, serial, rank, health_score, key, health_reasons->>0 as reason from per_machine where rank >= 1 order by rank desc, health_score asc nulls first, serial limit 20) x) as attention,
  (select json_agg(x) from (select day, band, count(*) as n from loop_health_day where organisation_id = $1 and day >= current_date - 29 group by day, band) x) as trend`;

async function main() {
  console.log(`Fresh PostgreSQL on ${PG_PORT}; ${MACHINES} machines × 6 loops × ${DAYS} days of hourly digests.`);
  sh(`pg_stop ${DATA}; rm -rf ${DATA}; pg_ensure_running ${DATA} ${PG_PORT} off`);
  const { migrateDatabase } = await import("../lib/migrate-database");
  await migrateDatabase(DATABASE_URL);
  const { getDb, closeDb } = await import("~/.server/db/client");
  const { sql } = await import("drizzle-orm");
  const { createTeam, createCustomer, createSite, createMachineModel } = await import("../../tests/factories");
  const { getOverview } = await import("~/.server/health/overview");
  const { evaluateMachineHealth } = await import("~/.server/health/evaluate");
  const { EVALUATE_DELAY_S, EVALUATE_MIN_INTERVAL_MS } = await import("~/.server/health/queue");
  const db = getDb();
  const team = await createTeam(db, ["owner"]);
  const org = team.organisation.id;
  // Hourly digests: the template expects one an hour (silent after three missed).
  const thresholds = { acceptableAmplitude: 1.5, ultimatePeriod: 160, oscillationPerHour: 4.5, saturationWatch: 0.05, saturationAct: 0.2, clampWatch: 0.05, clampAct: 0.2, errRmsWatch: 1.5, silentAfter: 10_800, expectedDigestIntervalS: 3600 };
  const model = await createMachineModel(db, {
    organisationId: org,
    name: "Bench line",
    templates: Array.from({ length: 6 }, (_, i) => ({ key: `zone_${i + 1}`, name: `Zone ${i + 1}`, unit: "°C", samplePeriodS: 1, outputMin: 0, outputMax: 255, defaultGains: { kp: 6, ki: 0.04, kd: 0 }, thresholds: thresholds as never })),
  });
  const sites = [];
  for (let c = 0; c < 10; c++) {
    const customer = await createCustomer(db, { organisationId: org, name: `Customer ${c}` });
    for (let s = 0; s < 3; s++) sites.push(await createSite(db, { organisationId: org, customerId: customer.id, name: `Site ${c}-${s}` }));
  }
  let t0 = performance.now();
  await db.execute(sql`
    insert into machine (organisation_id, serial, model_id, site_id, status, last_seen_at)
    select ${org}, 'BX-' || lpad(g::text, 4, '0'), ${model.id}::uuid, (array[${sql.join(sites.map((s) => sql`${s.id}::uuid`), sql`, `)}])[1 + g % ${sites.length}], 'active', now()
    from generate_series(1, ${MACHINES}) g`);
  await db.execute(sql`
    insert into loop (organisation_id, machine_id, template_id, key, gains)
    select m.organisation_id, m.id, t.id, t.key, t.default_gains from machine m join loop_template t on t.organisation_id = m.organisation_id and t.model_id = m.model_id
    where m.organisation_id = ${org}`);
  await db.execute(sql`select flyball_ensure_digest_partitions((now() - make_interval(days => ${DAYS + 1}))::date, 3)`);
  // A tenth of the machines drift into saturation over the month; one loop in fifty oscillates.
  const hours = DAYS * 24;
  await db.execute(sql`
    insert into digest (organisation_id, loop_id, window_start, seq, window_end, samples, gain_version, sp_mean, pv_mean, err_mean, err_rms, err_max_abs, iae, ise,
                        u_mean, u_std, sat_high_frac, sat_low_frac, int_clamp_frac, osc_count, sp_changes)
    select l.organisation_id, l.id, w.start, w.g, w.start + interval '1 hour', 3600, 1, 220, 219.8, 0.2, 0.6 + 0.1 * random(), 1.9, 12 * 60 * (1 + 0.1 * random()), 21.6 * 60,
           160, 4, s.sat, 0, s.sat / 2, case when l.n % 50 = 0 then 8 else (random() < 0.2)::int end, 0
    from (select l.*, row_number() over (order by l.machine_id, l.key) as n from loop l where l.organisation_id = ${org}) l
    cross join lateral (select g, date_trunc('hour', now()) - make_interval(hours => ${hours} - g) as start from generate_series(1, ${hours}) g) w
    cross join lateral (select case when l.n % 60 < 6 then least(0.6, 0.4 * w.g / ${hours}::float8 + 0.02 * random()) else 0.01 * random() end as sat) s`);
  const [{ n: digestCount }] = (await db.execute<{ n: number }>(sql`select count(*)::int as n from digest where organisation_id = ${org}`)).rows;
  const insertS = (performance.now() - t0) / 1000;
  t0 = performance.now();
  await db.execute(sql.raw(`insert into loop_hour as h (${ROLLUP_COLUMNS}) ${ROLLUP_SELECT.replace("%ROWS%", `(select * from digest where organisation_id = '${org}')`)} ${ROLLUP_UPSERT}`));
  const rollupS = (performance.now() - t0) / 1000;
  await db.execute(sql`update loop l set last_digest_at = (select max(last_window_end) from loop_hour h where h.organisation_id = l.organisation_id and h.loop_id = l.id) where l.organisation_id = ${org}`);
  await db.execute(sql`vacuum analyze`);
  console.log(`digests: ${digestCount} rows in ${insertS.toFixed(1)} s; hourly rollups built in ${rollupS.toFixed(1)} s`);

  // Every machine evaluated once, as the job does after a backfill.
  const machines = (await db.execute<{ id: string }>(sql`select id from machine where organisation_id = ${org} order by serial`)).rows;
  const evalTimes: number[] = [];
  t0 = performance.now();
  for (const m of machines) {
    const s = performance.now();
    await evaluateMachineHealth(db, { organisationId: org, machineId: m.id });
    evalTimes.push(performance.now() - s);
  }
  evalTimes.sort((a, b) => a - b);
  const [{ n: findings }] = (await db.execute<{ n: number }>(sql`select count(*)::int as n from finding where organisation_id = ${org} and state = 'open'`)).rows;
  console.log(`evaluation: ${machines.length} machines in ${((performance.now() - t0) / 1000).toFixed(1)} s; per machine p50 ${ms(pct(evalTimes, 50))} ms, p95 ${ms(pct(evalTimes, 95))} ms; ${findings} open findings`);

  // The overview: the loader's function and the hand-written query, alternating, 50 each.
  const pool = new pg.Pool({ connectionString: DATABASE_URL, max: 2 });
  const scope = { organisationId: org, siteIds: null };
  for (let i = 0; i < 5; i++) {
    await getOverview(db, scope, {});
    await pool.query(HAND_WRITTEN, [org]);
  }
  const loader: number[] = [];
  const hand: number[] = [];
  let last: Awaited<ReturnType<typeof getOverview>> | null = null;
  for (let i = 0; i < REQUESTS; i++) {
    let s = performance.now();
    last = await getOverview(db, scope, {});
    loader.push(performance.now() - s);
    s = performance.now();
    await pool.query(HAND_WRITTEN, [org]);
    hand.push(performance.now() - s);
  }
  loader.sort((a, b) => a - b);
  hand.sort((a, b) => a - b);
  console.log(`overview (loops: ${JSON.stringify(last!.loops)}, open findings: ${JSON.stringify(last!.openFindings.bySeverity)})`);
  console.log(`  getOverview      p50 ${ms(pct(loader, 50))} ms  p95 ${ms(pct(loader, 95))} ms  (target p95 < 150 ms: ${pct(loader, 95) < 150 ? "MET" : "MISS"})`);
  console.log(`  hand-written SQL p50 ${ms(pct(hand, 50))} ms  p95 ${ms(pct(hand, 95))} ms`);
  const ratio = pct(loader, 50) / pct(hand, 50);
  console.log(`  loader / hand-written: p50 ${ratio.toFixed(2)}×, p95 ${(pct(loader, 95) / pct(hand, 95)).toFixed(2)}× (target ≤ 1.5×: ${ratio <= 1.5 ? "MET" : "MISS"})`);

  // Evaluation lag at the ingest bench's rate: digests arrive for random machines (each arrival
  // also adds to the rollups, as ingest does), a machine is evaluated EVALUATE_DELAY_S after it
  // is asked for and at most every EVALUATE_MIN_INTERVAL_MS (the queue's debounce), by one worker.
  const loops = (await db.execute<{ id: string; machine_id: string }>(sql`select id, machine_id from loop where organisation_id = ${org}`)).rows;
  const dirty = new Map<string, number>();
  const lastEval = new Map<string, number>();
  const lags: number[] = [];
  let produced = 0;
  let seq = 1_000_000;
  const end = Date.now() + LIVE_SECONDS * 1000;
  const tickMs = 250;
  const producer = (async () => {
    while (Date.now() < end) {
      const tick = Date.now();
      const n = Math.round((INGEST_RATE * tickMs) / 1000);
      const chosen = Array.from({ length: n }, () => loops[Math.floor(Math.random() * loops.length)]);
      const ids = chosen.map((l) => l.id);
      const seqs = chosen.map(() => seq++);
      const now = new Date();
      await pool.query(
        `with input as (
           select $1::text as organisation_id, t.loop_id, t.seq, $3::timestamptz - interval '1 minute' as window_start, $3::timestamptz as window_end
           from unnest($2::uuid[], $4::int[]) as t(loop_id, seq)
         ), stored as (
           insert into digest (organisation_id, loop_id, window_start, seq, window_end, samples, gain_version, sp_mean, pv_mean, err_mean, err_rms, err_max_abs, iae, ise, u_mean, u_std, sat_high_frac, sat_low_frac, int_clamp_frac, osc_count, sp_changes)
           select organisation_id, loop_id, window_start, seq, window_end, 60, 1, 220, 219.8, 0.2, 0.6, 1.9, 12, 21.6, 160, 4, 0.01, 0, 0, 0, 0 from input
           returning *
         )
         insert into loop_hour as h (${ROLLUP_COLUMNS}) ${ROLLUP_SELECT.replace("%ROWS%", "stored")} ${ROLLUP_UPSERT}`,
        [org, ids, now.toISOString(), seqs],
      );
      produced += n;
      for (const l of chosen) if (!dirty.has(l.machine_id)) dirty.set(l.machine_id, tick);
      const wait = tickMs - (Date.now() - tick);
      if (wait > 0) await new Promise((r) => setTimeout(r, wait));
    }
  })();
  const worker = (async () => {
    while (Date.now() < end + 15_000 && (Date.now() < end || dirty.size > 0)) {
      const now = Date.now();
      const ready = [...dirty.entries()].filter(([id, since]) => now - since >= EVALUATE_DELAY_S * 1000 && now - (lastEval.get(id) ?? 0) >= EVALUATE_MIN_INTERVAL_MS).sort((a, b) => a[1] - b[1]);
      if (ready.length === 0) {
        await new Promise((r) => setTimeout(r, 50));
        continue;
      }
      const [machineId, since] = ready[0];
      dirty.delete(machineId);
      await evaluateMachineHealth(db, { organisationId: org, machineId });
      lastEval.set(machineId, Date.now());
      lags.push((Date.now() - since) / 1000);
    }
  })();
  await Promise.all([producer, worker]);
  lags.sort((a, b) => a - b);
  console.log(`evaluation lag while ${produced} digests arrived in ${LIVE_SECONDS} s (${Math.round(produced / LIVE_SECONDS)}/s, the ingest bench's rate) across ${machines.length} machines, one worker:`);
  console.log(`  ${lags.length} evaluations; lag from a machine's first unevaluated digest to its evaluation p50 ${pct(lags, 50).toFixed(1)} s, p95 ${pct(lags, 95).toFixed(1)} s, max ${lags.at(-1)!.toFixed(1)} s; ${dirty.size} machines still waiting at the end`);
  console.log(`  (floor: the queue's delay ${EVALUATE_DELAY_S} s and one evaluation per machine per ${EVALUATE_MIN_INTERVAL_MS / 1000} s)`);
  await pool.end();
  await closeDb();
  sh(`pg_stop ${DATA}`);
}

main().catch((error) => {
  console.error(error);
  try {
    sh(`pg_stop ${DATA}`);
  } catch {}
  process.exit(1);
});
