// Reading a loop's digests for trends: raw windows, or time buckets for long ranges.
import { DomainError } from "~/lib/errors";
import { and, eq } from "drizzle-orm";
import { sql } from "drizzle-orm";
import { z } from "zod";
import type { Db } from "~/.server/db/client";
import { loop, machine } from "~/.server/db/schema";

import { inScope, type SiteScope } from "./scope";

export const DigestRangeQuerySchema = z
  .object({
    from: z.iso.datetime({ offset: true, message: "Give an ISO 8601 time with offset." }).optional(),
    to: z.iso.datetime({ offset: true, message: "Give an ISO 8601 time with offset." }).optional(),
    bucket: z.coerce.number().int().min(60, "Buckets are at least 60 s.").max(86_400 * 7).optional(),
    page: z.coerce.number().int().min(1).max(100_000).default(1),
    pageSize: z.coerce.number().int().min(1).max(2000).default(500),
  })
  .transform((q, ctx) => {
    const to = q.to ? new Date(q.to) : new Date();
    const from = q.from ? new Date(q.from) : new Date(to.getTime() - 86_400_000);
    if (!(from < to)) ctx.addIssue({ code: "custom", path: ["to"], message: "to must be after from." });
    if (to.getTime() - from.getTime() > 400 * 86_400_000) ctx.addIssue({ code: "custom", path: ["from"], message: "Ask for at most 400 days." });
    return { ...q, from, to };
  });
export type DigestRangeQuery = z.infer<typeof DigestRangeQuerySchema>;

type DigestRow = Record<string, unknown> & { window_start: Date | string; window_end: Date | string };

const NUMERIC = ["samples", "gain_version", "sp_mean", "pv_mean", "err_mean", "err_rms", "err_max_abs", "iae", "ise", "u_mean", "u_std", "sat_high_frac", "sat_low_frac", "int_clamp_frac", "osc_count", "sp_changes"] as const;
const CAMEL: Record<string, string> = {
  samples: "samples", gain_version: "gainVersion", sp_mean: "spMean", pv_mean: "pvMean", err_mean: "errMean", err_rms: "errRms", err_max_abs: "errMaxAbs",
  iae: "iae", ise: "ise", u_mean: "uMean", u_std: "uStd", sat_high_frac: "satHighFrac", sat_low_frac: "satLowFrac", int_clamp_frac: "intClampFrac", osc_count: "oscCount", sp_changes: "spChanges",
};

function mapRow(row: DigestRow) {
  const out: Record<string, unknown> = {
    windowStart: new Date(row.window_start).toISOString(),
    windowEnd: new Date(row.window_end).toISOString(),
  };
  if (row.seq !== undefined && row.seq !== null) out.seq = Number(row.seq);
  for (const key of NUMERIC) out[CAMEL[key]] = row[key] === null ? null : Number(row[key]);
  return out;
}

export async function listLoopDigests(db: Db, scope: SiteScope, { loopId, query }: { loopId: string; query: DigestRangeQuery }) {
  if (!z.uuid().safeParse(loopId).success) throw new DomainError("not_found", "No such loop.", { status: 404 });
  const [target] = await db
    .select({ id: loop.id, key: loop.key, machineId: loop.machineId, siteId: machine.siteId })
    .from(loop)
    .innerJoin(machine, and(eq(machine.organisationId, loop.organisationId), eq(machine.id, loop.machineId)))
    .where(and(eq(loop.organisationId, scope.organisationId), eq(loop.id, loopId)));
  if (!target || !inScope(scope, target.siteId)) throw new DomainError("not_found", "No such loop.", { status: 404 });
  const range = sql`d.organisation_id = ${scope.organisationId} and d.loop_id = ${loopId}::uuid
    and d.window_start >= ${query.from.toISOString()}::timestamptz and d.window_start < ${query.to.toISOString()}::timestamptz`;
  const offset = (query.page - 1) * query.pageSize;
  if (query.bucket) {
    // Sample-weighted means per bucket; extremes and counts combine as max and sum.
    const w = sql`d.samples::float8`;
    const result = await db.execute<DigestRow & { total: number }>(sql`
      select date_bin(make_interval(secs => ${query.bucket}), d.window_start, '2000-01-01'::timestamptz) as window_start,
        max(d.window_end) as window_end, sum(d.samples)::int as samples, max(d.gain_version) as gain_version,
        sum(d.sp_mean * ${w}) / nullif(sum(${w}), 0) as sp_mean, sum(d.pv_mean * ${w}) / nullif(sum(${w}), 0) as pv_mean,
        sum(d.err_mean * ${w}) / nullif(sum(${w}), 0) as err_mean, sqrt(sum(d.err_rms ^ 2 * ${w}) / nullif(sum(${w}), 0)) as err_rms,
        max(d.err_max_abs) as err_max_abs, sum(d.iae) as iae, sum(d.ise) as ise,
        sum(d.u_mean * ${w}) / nullif(sum(${w}), 0) as u_mean, sqrt(sum(d.u_std ^ 2 * ${w}) / nullif(sum(${w}), 0)) as u_std,
        sum(d.sat_high_frac * ${w}) / nullif(sum(${w}), 0) as sat_high_frac, sum(d.sat_low_frac * ${w}) / nullif(sum(${w}), 0) as sat_low_frac,
        sum(d.int_clamp_frac * ${w}) / nullif(sum(${w}), 0) as int_clamp_frac, sum(d.osc_count)::int as osc_count, sum(d.sp_changes)::int as sp_changes,
        count(*) over ()::int as total
      from digest d where ${range}
      group by 1 order by 1 limit ${query.pageSize} offset ${offset}`);
    return { items: result.rows.map(mapRow), total: Number(result.rows[0]?.total ?? 0), page: query.page, pageSize: query.pageSize, bucket: query.bucket };
  }
  const result = await db.execute<DigestRow & { total: number }>(sql`
    select d.seq, d.window_start, d.window_end, d.samples, d.gain_version, d.sp_mean, d.pv_mean, d.err_mean, d.err_rms, d.err_max_abs,
      d.iae, d.ise, d.u_mean, d.u_std, d.sat_high_frac, d.sat_low_frac, d.int_clamp_frac, d.osc_count, d.sp_changes,
      count(*) over ()::int as total
    from digest d where ${range}
    order by d.window_start, d.seq limit ${query.pageSize} offset ${offset}`);
  return { items: result.rows.map(mapRow), total: Number(result.rows[0]?.total ?? 0), page: query.page, pageSize: query.pageSize, bucket: null };
}
