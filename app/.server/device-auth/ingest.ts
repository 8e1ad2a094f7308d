// POST /api/v1/device/digests: validate each digest, store the valid ones in one statement,
// say which were refused. Idempotent on (loop, seq) through digest_seq (see schema/digests.ts).
import { getPool } from "~/.server/db/client";
import { scheduleHealthRefresh } from "~/.server/fleet/health";
import type { DeviceContext } from "./tokens";
import { DigestSchema, type DigestInput } from "./schemas";

export type Rejection = { index: number; code: string; message: string };
export type IngestResult = { accepted: number; duplicates: number; rejected: Rejection[] };

const LOOP_CACHE_MS = 60_000;
const loopCache = new Map<string, { at: number; loops: Map<string, string> }>();

async function loopsOf(ctx: DeviceContext, now: number): Promise<Map<string, string>> {
  const cached = loopCache.get(ctx.machineId);
  if (cached && now - cached.at < LOOP_CACHE_MS) return cached.loops;
  const result = await getPool().query<{ key: string; id: string }>({
    name: "device_loops_of_machine",
    text: "select key, id from loop where organisation_id = $1 and machine_id = $2",
    values: [ctx.organisationId, ctx.machineId],
  });
  const loops = new Map(result.rows.map((r) => [r.key, r.id]));
  if (loopCache.size > 100_000) loopCache.clear();
  loopCache.set(ctx.machineId, { at: now, loops });
  return loops;
}

/** How far in the past and future a window may lie (partitions exist for this span). */
const MAX_AGE_MS = 90 * 86_400_000;
const MAX_FUTURE_MS = 5 * 60_000;

const COLUMNS = [
  ["loop_id", "uuid"], ["seq", "int4"], ["window_start", "timestamptz"], ["window_end", "timestamptz"], ["samples", "int4"], ["gain_version", "int4"],
  ["sp_mean", "float8"], ["pv_mean", "float8"], ["err_mean", "float8"], ["err_rms", "float8"], ["err_max_abs", "float8"], ["iae", "float8"], ["ise", "float8"],
  ["u_mean", "float8"], ["u_std", "float8"], ["sat_high_frac", "float8"], ["sat_low_frac", "float8"], ["int_clamp_frac", "float8"], ["osc_count", "int4"], ["sp_changes", "int4"],
] as const;

// The claim on (loop, seq) and the digest row go in together: a retry claims nothing and
// stores nothing. One statement, one round trip, prepared once per connection.
const INSERT_SQL = `
with input as (
  select * from unnest(${COLUMNS.map(([, type], i) => `$${i + 2}::${type}[]`).join(", ")})
    as t(${COLUMNS.map(([name]) => name).join(", ")})
), claimed as (
  insert into digest_seq (organisation_id, loop_id, seq)
  select $1, loop_id, seq from input
  on conflict do nothing
  returning loop_id, seq
)
insert into digest (organisation_id, ${COLUMNS.map(([name]) => name).join(", ")})
select $1, ${COLUMNS.map(([name]) => `i.${name}`).join(", ")}
from input i join claimed c on c.loop_id = i.loop_id and c.seq = i.seq
on conflict do nothing`;

function describe(issues: { path: PropertyKey[]; message: string }[]): string {
  const first = issues[0];
  return first ? `${first.path.map(String).join(".") || "digest"}: ${first.message}` : "Invalid digest.";
}

export async function ingestDigests(ctx: DeviceContext, items: unknown[], nowMs = Date.now()): Promise<IngestResult> {
  const loops = await loopsOf(ctx, nowMs);
  const rejected: Rejection[] = [];
  const valid: { loopId: string; d: DigestInput }[] = [];
  const seen = new Set<string>();
  let duplicates = 0;
  for (let index = 0; index < items.length; index++) {
    const parsed = DigestSchema.safeParse(items[index]);
    if (!parsed.success) {
      rejected.push({ index, code: "invalid_digest", message: describe(parsed.error.issues) });
      continue;
    }
    const d = parsed.data;
    const loopId = loops.get(d.loop);
    if (!loopId) {
      rejected.push({ index, code: "unknown_loop", message: `loop: this machine has no loop "${d.loop}".` });
      continue;
    }
    const start = Date.parse(d.windowStart);
    const end = Date.parse(d.windowEnd);
    if (!(end > start)) {
      rejected.push({ index, code: "invalid_window", message: "windowEnd: must be after windowStart." });
      continue;
    }
    if (start < nowMs - MAX_AGE_MS || end > nowMs + MAX_FUTURE_MS) {
      rejected.push({ index, code: "window_out_of_range", message: "windowStart: must lie within the last 90 days and not in the future." });
      continue;
    }
    if (d.satHighFrac + d.satLowFrac > 1 + 1e-9) {
      rejected.push({ index, code: "invalid_digest", message: "satHighFrac + satLowFrac: must not exceed 1." });
      continue;
    }
    const key = `${loopId}:${d.seq}`;
    if (seen.has(key)) {
      duplicates += 1;
      continue;
    }
    seen.add(key);
    valid.push({ loopId, d });
  }
  if (valid.length === 0) return { accepted: 0, duplicates, rejected };

  const columns: unknown[][] = COLUMNS.map(() => new Array(valid.length));
  for (let i = 0; i < valid.length; i++) {
    const { loopId, d } = valid[i];
    const row = [loopId, d.seq, d.windowStart, d.windowEnd, d.samples, d.gainVersion, d.spMean, d.pvMean, d.errMean, d.errRms, d.errMaxAbs, d.iae, d.ise, d.uMean, d.uStd, d.satHighFrac, d.satLowFrac, d.intClampFrac, d.oscCount, d.spChanges];
    for (let c = 0; c < row.length; c++) columns[c][i] = row[c];
  }
  const values = [ctx.organisationId, ...columns];
  let inserted: number;
  try {
    inserted = (await getPool().query({ name: "device_digest_insert", text: INSERT_SQL, values })).rowCount ?? 0;
  } catch (error) {
    // A month without its partition yet (the job creates them ahead; this is the fallback).
    if ((error as { code?: string }).code !== "23514") throw error;
    const first = valid.reduce((m, v) => Math.min(m, Date.parse(v.d.windowStart)), Infinity);
    const last = valid.reduce((m, v) => Math.max(m, Date.parse(v.d.windowStart)), -Infinity);
    const months = Math.ceil((last - first) / (28 * 86_400_000)) + 2;
    await getPool().query("select flyball_ensure_digest_partitions($1::date, $2)", [new Date(first).toISOString().slice(0, 10), months]);
    inserted = (await getPool().query({ name: "device_digest_insert", text: INSERT_SQL, values })).rowCount ?? 0;
  }
  if (inserted > 0) scheduleHealthRefresh(ctx.organisationId, ctx.machineId);
  return { accepted: inserted, duplicates: duplicates + (valid.length - inserted), rejected };
}
