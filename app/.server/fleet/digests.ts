// Reading a loop's digests for trends: raw windows, or time buckets for long ranges.
import { DomainError } from "~/lib/errors";
import { and, eq } from "drizzle-orm";
import { sql, type SQL } from "drizzle-orm";
import { DIGEST_FIELDS, type DigestField } from "~/lib/health/digest-fields";
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

/** How a bucket combines its windows' values of a field (sample-weighted where it is a mean). */
function bucketed(field: DigestField): SQL {
  const column = sql.raw(`d.${field.column}`);
  const w = sql`d.samples::float8`;
  const cast = field.kind === "count" ? sql.raw("::int") : sql.raw("");
  switch (field.merge) {
    case "sum":
      return sql`sum(${column})${cast}`;
    case "max":
      return sql`max(${column})`;
    case "mean":
      return sql`sum(${column} * ${w}) / nullif(sum(${w}), 0)`;
    case "rms":
      return sql`sqrt(sum(${column} ^ 2 * ${w}) / nullif(sum(${w}), 0))`;
  }
}

const RAW_COLUMNS = sql.raw(DIGEST_FIELDS.map((f) => `d.${f.column}`).join(", "));
const BUCKET_COLUMNS = sql.join(DIGEST_FIELDS.map((f) => sql`${bucketed(f)} as ${sql.raw(f.column)}`), sql`, `);

function mapRow(row: DigestRow) {
  const out: Record<string, unknown> = {
    windowStart: new Date(row.window_start).toISOString(),
    windowEnd: new Date(row.window_end).toISOString(),
  };
  if (row.seq !== undefined && row.seq !== null) out.seq = Number(row.seq);
  for (const field of DIGEST_FIELDS) out[field.name] = row[field.column] === null ? null : Number(row[field.column]);
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
    // Means weighted by samples, extremes as max, integrals and counts as sums (DIGEST_FIELDS' merge).
    const result = await db.execute<DigestRow & { total: number }>(sql`
      select date_bin(make_interval(secs => ${query.bucket}), d.window_start, '2000-01-01'::timestamptz) as window_start,
        max(d.window_end) as window_end, ${BUCKET_COLUMNS},
        count(*) over ()::int as total
      from digest d where ${range}
      group by 1 order by 1 limit ${query.pageSize} offset ${offset}`);
    return { items: result.rows.map(mapRow), total: Number(result.rows[0]?.total ?? 0), page: query.page, pageSize: query.pageSize, bucket: query.bucket };
  }
  const result = await db.execute<DigestRow & { total: number }>(sql`
    select d.seq, d.window_start, d.window_end, ${RAW_COLUMNS},
      count(*) over ()::int as total
    from digest d where ${range}
    order by d.window_start, d.seq limit ${query.pageSize} offset ${offset}`);
  return { items: result.rows.map(mapRow), total: Number(result.rows[0]?.total ?? 0), page: query.page, pageSize: query.pageSize, bucket: null };
}
