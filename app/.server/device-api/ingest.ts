// POST /api/v1/device/digests: validate each digest, store the valid ones, say which were
// refused. Idempotent on (loop, seq) through digest_seq (see schema/digests.ts).
import { createBatcher } from "~/.server/db/batch";
import { getIngestPool, getPool } from "~/.server/db/client";
import { requestHealthEvaluation } from "~/.server/health/queue";
import { deviceUnauthorized, refusalOf, runOncePerToken, TOKEN_CHECK_CTES, type DeviceContext, type TokenStanding, type VerifiedToken } from "~/.server/device-auth/tokens";
import { DIGEST_FIELDS, digestSqlType } from "~/lib/health/digest-fields";
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

/** The digest row's columns and their SQL types: the identity, then the measured fields' table. */
const COLUMNS: readonly (readonly [string, string])[] = [
  ["loop_id", "uuid"], ["seq", "int4"], ["window_start", "timestamptz"], ["window_end", "timestamptz"],
  ...DIGEST_FIELDS.map((f) => [f.column, digestSqlType(f)] as const),
];

// One statement for a whole batch of requests (see ~/.server/db/batch): the device token checks
// (TOKEN_CHECK_CTES in tokens.ts) and the digests, so that a device's post costs one share of
// one round trip. Only the digests of requests that pass the checks go on. The claim on
// (loop, seq) and the digest row go in together, so a retry claims nothing and stores nothing.
// No (loop, seq) appears twice in one statement (storePosts sees to it). A newly claimed
// (loop, seq) has no digest yet, so every claimed row is stored and is counted from the claims,
// and added once to its loop's hourly rollup (loop_hour).
// Claims are taken in key order so that concurrent batches never wait on each other in a cycle.
const INGEST_SQL = `
with request as (
  select * from unnest($1::text[], $2::uuid[], $3::text[], $4::timestamptz[]) with ordinality
    as t(organisation_id, device_id, jti, expires_at, req)
), ${TOKEN_CHECK_CTES}, input as (
  select p.organisation_id, t.*
  from unnest($5::int8[], ${COLUMNS.map(([, type], i) => `$${i + 6}::${type}[]`).join(", ")})
    as t(req, ${COLUMNS.map(([name]) => name).join(", ")})
  join passed p on p.req = t.req
), claimed as (
  insert into digest_seq (organisation_id, loop_id, seq)
  select organisation_id, loop_id, seq from input order by organisation_id, loop_id, seq
  on conflict do nothing
  returning loop_id, seq
), accepted as (
  select i.* from input i join claimed c on c.loop_id = i.loop_id and c.seq = i.seq
), stored as (
  insert into digest (organisation_id, ${COLUMNS.map(([name]) => name).join(", ")})
  select organisation_id, ${COLUMNS.map(([name]) => name).join(", ")} from accepted
  on conflict do nothing
), rolled as (
  -- The hourly rollups (schema/health.ts): each newly claimed digest added once, in numeric.
  insert into loop_hour as h (organisation_id, loop_id, hour, digests, samples, seconds, iae, sat_samples, clamp_samples, pinned_samples, err2_samples, osc_count, last_window_end, gain_version)
  select organisation_id, loop_id, hour, count(*), sum(samples), sum(extract(epoch from window_end - window_start)), sum(iae::numeric),
         sum(sat::numeric * samples), sum(int_clamp_frac::numeric * samples), sum(least(int_clamp_frac, sat)::numeric * samples),
         sum((err_rms * err_rms)::numeric * samples), sum(osc_count), max(window_end), max(gain_version)
  from (select a.*, date_bin('1 hour', a.window_start, timestamptz '2000-01-01 00:00:00+00') as hour, least(1, a.sat_high_frac + a.sat_low_frac) as sat from accepted a) x
  group by organisation_id, loop_id, hour
  order by organisation_id, loop_id, hour
  on conflict (organisation_id, loop_id, hour) do update set
    digests = h.digests + excluded.digests, samples = h.samples + excluded.samples, seconds = h.seconds + excluded.seconds,
    iae = h.iae + excluded.iae, sat_samples = h.sat_samples + excluded.sat_samples, clamp_samples = h.clamp_samples + excluded.clamp_samples,
    pinned_samples = h.pinned_samples + excluded.pinned_samples, err2_samples = h.err2_samples + excluded.err2_samples,
    osc_count = h.osc_count + excluded.osc_count, last_window_end = greatest(h.last_window_end, excluded.last_window_end),
    gain_version = greatest(h.gain_version, excluded.gain_version)
), stored_per_request as (
  select req, count(*)::int as stored from accepted group by req
)
select s.req, s.device_status, s.machine_status, p.req is not null as fresh, coalesce(n.stored, 0) as stored
from state s left join passed p on p.req = s.req left join stored_per_request n on n.req = s.req
order by s.req`;

type Row = { loopId: string; d: DigestInput };
type Post = { token: VerifiedToken; rows: Row[] };
type PostOutcome = TokenStanding & { stored: number };

/**
 * Checks the tokens and stores the digests of several requests at once. A token used again in
 * the same batch is a replay (runOncePerToken). Requests that repeat a (loop, seq) of an earlier
 * request go in a later statement, so that each is judged after the one before it (a duplicate
 * only counts as such once its first copy is stored).
 */
function storePosts(posts: readonly Post[]): Promise<PostOutcome[]> {
  return runOncePerToken(posts, (post) => post.token, storeInRounds, (first) => ({ ...first, fresh: false, stored: 0 }));
}

async function storeInRounds(posts: Post[]): Promise<PostOutcome[]> {
  const outcomes = new Array<PostOutcome>(posts.length);
  let pending = posts.map((post, index) => ({ post, index }));
  while (pending.length > 0) {
    const now: typeof pending = [];
    const later: typeof pending = [];
    const keys = new Set<string>();
    for (const entry of pending) {
      const mine = entry.post.rows.map((r) => `${r.loopId} ${r.d.seq}`);
      if (mine.some((key) => keys.has(key))) later.push(entry);
      else {
        for (const key of mine) keys.add(key);
        now.push(entry);
      }
    }
    const results = await runIngest(now.map((e) => e.post));
    now.forEach((entry, i) => (outcomes[entry.index] = results[i]));
    pending = later;
  }
  return outcomes;
}

async function runIngest(posts: Post[]): Promise<PostOutcome[]> {
  const requestColumns: unknown[][] = [[], [], [], []];
  const digestColumns: unknown[][] = [[], ...COLUMNS.map(() => [])];
  posts.forEach(({ token, rows }, index) => {
    requestColumns[0].push(token.organisationId);
    requestColumns[1].push(token.deviceId);
    requestColumns[2].push(token.jti);
    requestColumns[3].push(token.expiresAt.toISOString());
    for (const { loopId, d } of rows) {
      // `with ordinality` numbers the requests from 1.
      digestColumns[0].push(index + 1);
      digestColumns[1].push(loopId);
      digestColumns[2].push(d.seq);
      digestColumns[3].push(d.windowStart);
      digestColumns[4].push(d.windowEnd);
      for (let f = 0; f < DIGEST_FIELDS.length; f++) digestColumns[f + 5].push(d[DIGEST_FIELDS[f].name]);
    }
  });
  // The digest columns are sent as array literals made here: every element is a finite number,
  // a uuid from our own table or a time that passed z.iso.datetime, none of which holds a
  // quote, comma, brace or space, so no element needs escaping (node-pg would quote each one).
  const values = [...requestColumns, ...digestColumns.map((column) => `{${column.join(",")}}`)];
  const query = () => getIngestPool().query<PostOutcome & { req: string }>({ name: "device_ingest", text: INGEST_SQL, values });
  try {
    return (await query()).rows;
  } catch (error) {
    // A month without its partition yet (the job creates them ahead; this is the fallback).
    // The failed statement changed nothing, so it is simply run again.
    if ((error as { code?: string }).code !== "23514") throw error;
    const starts = posts.flatMap((p) => p.rows.map((r) => Date.parse(r.d.windowStart)));
    const first = Math.min(...starts);
    const months = Math.ceil((Math.max(...starts) - first) / (28 * 86_400_000)) + 2;
    await getPool().query("select flyball_ensure_digest_partitions($1::date, $2)", [new Date(first).toISOString().slice(0, 10), months]);
    return (await query()).rows;
  }
}

const ingest = createBatcher(storePosts, { maxInFlight: 2, maxBatchSize: 32 });

function describe(issues: { path: PropertyKey[]; message: string }[]): string {
  const first = issues[0];
  return first ? `${first.path.map(String).join(".") || "digest"}: ${first.message}` : "Invalid digest.";
}

/**
 * Validate a device's digests and store the valid ones, recording the token's jti in the same
 * statement. Throws a 401 Response (and stores nothing) when the device may not post.
 */
export async function ingestDigests(token: VerifiedToken, items: unknown[], nowMs = Date.now()): Promise<IngestResult> {
  const loops = await loopsOf(token, nowMs);
  const rejected: Rejection[] = [];
  const valid: Row[] = [];
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
    // Times go to SQL in UTC: PostgreSQL refuses offsets that ISO 8601 allows (beyond ±15:59).
    // `d` is zod's own copy of the item, so it is rewritten in place; most devices send UTC already.
    if (!d.windowStart.endsWith("Z")) d.windowStart = new Date(start).toISOString();
    if (!d.windowEnd.endsWith("Z")) d.windowEnd = new Date(end).toISOString();
    valid.push({ loopId, d });
  }
  // Even with nothing valid to store the token is checked and its jti used up.
  const outcome = await ingest.run({ token, rows: valid });
  const refusal = refusalOf(outcome);
  if (refusal) throw deviceUnauthorized(refusal);
  if (outcome.stored > 0) requestHealthEvaluation(token.organisationId, token.machineId);
  return { accepted: outcome.stored, duplicates: duplicates + (valid.length - outcome.stored), rejected };
}
