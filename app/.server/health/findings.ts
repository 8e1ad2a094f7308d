// Findings for the management API and pages: list (filters, sort, pages), one with its history,
// acknowledge and resolve with a comment, and the metric's hourly series for a finding's chart.
// Site managers see only their sites: another site's finding is "not found".
import { sql, type SQL } from "drizzle-orm";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import type { SiteScope } from "~/.server/fleet/scope";
import type { FindingDetail, FindingEvidence, FindingHistoryEntry, FindingItem, FindingKind, FindingSeverity, FindingState, FindingsQuery, Paged } from "~/lib/health/api-types";
import { DomainError } from "~/lib/errors";

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

export function notFound(what: string): DomainError {
  return new DomainError("not_found", `No such ${what}.`, { status: 404 });
}

/** Ids from a URL: anything but a uuid is simply not found. */
export function requireUuid(id: string | undefined, what: string): string {
  if (!id || !UUID.test(id)) throw notFound(what);
  return id.toLowerCase();
}

/** The scope as SQL on a machine alias `m` (site managers: their sites only). */
export function machineScopeSql(scope: SiteScope, alias = "m"): SQL {
  const a = sql.raw(alias);
  if (scope.siteIds === null) return sql`true`;
  if (scope.siteIds.length === 0) return sql`false`;
  return sql`${a}.site_id in (${sql.join(scope.siteIds.map((id) => sql`${id}::uuid`), sql`, `)})`;
}

type FindingRow = {
  id: string;
  kind: FindingKind;
  severity: FindingSeverity;
  state: FindingState;
  machine_id: string;
  machine_serial: string;
  loop_id: string;
  loop_key: string;
  opened_at: Date | string;
  updated_at: Date | string;
  resolved_at: Date | string | null;
  summary: string;
  evidence: FindingEvidence;
  total?: number;
};

const iso = (v: Date | string | null) => (v === null ? null : (v instanceof Date ? v : new Date(v)).toISOString());

function toItem(r: FindingRow): FindingItem {
  return {
    id: r.id,
    kind: r.kind,
    severity: r.severity,
    state: r.state,
    machineId: r.machine_id,
    machineSerial: r.machine_serial,
    loopId: r.loop_id,
    loopKey: r.loop_key,
    openedAt: iso(r.opened_at)!,
    updatedAt: iso(r.updated_at)!,
    resolvedAt: iso(r.resolved_at),
    summary: r.summary,
    evidence: r.evidence,
  };
}

const SELECT = sql`
  select f.id, f.kind, f.severity, f.state, f.machine_id, m.serial as machine_serial, f.loop_id, l.key as loop_key,
         f.opened_at, f.updated_at, f.resolved_at, f.summary, f.evidence`;
const FROM = sql`
  from finding f
  join machine m on m.organisation_id = f.organisation_id and m.id = f.machine_id
  join loop l on l.organisation_id = f.organisation_id and l.id = f.loop_id
  join site s on s.organisation_id = m.organisation_id and s.id = m.site_id`;

const SEVERITY_ORDER = sql`case f.severity when 'critical' then 2 when 'warning' then 1 else 0 end`;
const SORTS: Record<FindingsQuery["sort"], SQL> = {
  openedAt: sql`f.opened_at`,
  updatedAt: sql`f.updated_at`,
  severity: SEVERITY_ORDER,
  kind: sql`f.kind`,
  machineSerial: sql`m.serial`,
};

export async function listFindings(db: Db, scope: SiteScope, query: FindingsQuery): Promise<Paged<FindingItem>> {
  const where: SQL[] = [sql`f.organisation_id = ${scope.organisationId}`, machineScopeSql(scope)];
  if (query.state) where.push(sql`f.state = ${query.state}`);
  if (query.kind) where.push(sql`f.kind = ${query.kind}`);
  if (query.severity) where.push(sql`f.severity = ${query.severity}`);
  if (query.machineId) where.push(sql`f.machine_id = ${query.machineId}::uuid`);
  if (query.loopId) where.push(sql`f.loop_id = ${query.loopId}::uuid`);
  if (query.siteId) where.push(sql`m.site_id = ${query.siteId}::uuid`);
  if (query.customerId) where.push(sql`s.customer_id = ${query.customerId}::uuid`);
  const dir = query.dir === "asc" ? sql`asc` : sql`desc`;
  const rows = (
    await db.execute<FindingRow>(sql`${SELECT}, count(*) over ()::int as total ${FROM}
      where ${sql.join(where, sql` and `)}
      order by ${SORTS[query.sort]} ${dir}, f.updated_at desc, f.id
      limit ${query.pageSize} offset ${(query.page - 1) * query.pageSize}`)
  ).rows;
  let total = rows[0]?.total ?? 0;
  if (rows.length === 0 && query.page > 1) {
    const [count] = (await db.execute<{ n: number }>(sql`select count(*)::int as n ${FROM} where ${sql.join(where, sql` and `)}`)).rows;
    total = count?.n ?? 0;
  }
  return { items: rows.map(toItem), total: Number(total), page: query.page, pageSize: query.pageSize };
}

async function findingRow(db: Db, scope: SiteScope, id: string, lock = false): Promise<FindingRow> {
  const findingId = requireUuid(id, "finding");
  const [row] = (
    await db.execute<FindingRow>(sql`${SELECT} ${FROM}
      where f.organisation_id = ${scope.organisationId} and f.id = ${findingId}::uuid and ${machineScopeSql(scope)}
      ${lock ? sql`for update of f` : sql``}`)
  ).rows;
  if (!row) throw notFound("finding");
  return row;
}

async function historyOf(db: Db, organisationId: string, findingId: string): Promise<FindingHistoryEntry[]> {
  const rows = await db.execute<{ at: Date | string; state: FindingState; actor_name: string | null; comment: string | null }>(sql`
    select e.at, e.state, case when e.actor_id like 'token:%' then 'API token' else u.name end as actor_name, e.comment
    from finding_event e left join "user" u on u.id = e.actor_id
    where e.organisation_id = ${organisationId} and e.finding_id = ${findingId}::uuid
    order by e.at, e.id`);
  return rows.rows.map((r) => ({ at: iso(r.at)!, state: r.state, actorName: r.actor_name, comment: r.comment }));
}

export async function getFinding(db: Db, scope: SiteScope, id: string): Promise<FindingDetail> {
  const row = await findingRow(db, scope, id);
  return { ...toItem(row), history: await historyOf(db, scope.organisationId, row.id) };
}

async function transition(db: Db, scope: SiteScope, actor: string, id: string, to: "acknowledged" | "resolved", comment: string | null): Promise<FindingDetail> {
  await db.transaction(async (tx) => {
    const row = await findingRow(tx, scope, id, true);
    if (row.state === "resolved") throw new DomainError("finding_resolved", "This finding is already resolved.", { status: 409 });
    if (to === "acknowledged" && row.state === "acknowledged") {
      // A second acknowledgement only adds its comment to the history.
      if (comment) await tx.execute(sql`insert into finding_event (organisation_id, finding_id, state, severity, actor_id, comment) values (${scope.organisationId}, ${row.id}::uuid, 'acknowledged', ${row.severity}, ${actor}, ${comment})`);
      return;
    }
    await tx.execute(sql`update finding set state = ${to}, updated_at = now(), alert_pending = 0 ${to === "resolved" ? sql`, resolved_at = now()` : sql``}
      where organisation_id = ${scope.organisationId} and id = ${row.id}::uuid`);
    await tx.execute(sql`insert into finding_event (organisation_id, finding_id, state, severity, actor_id, comment) values (${scope.organisationId}, ${row.id}::uuid, ${to}, ${row.severity}, ${actor}, ${comment})`);
    await recordAudit(tx, { organisationId: scope.organisationId, actor, action: `finding.${to === "resolved" ? "resolve" : "acknowledge"}`, targetType: "finding", targetId: row.id, detail: { kind: row.kind, machineSerial: row.machine_serial, loopKey: row.loop_key, comment } });
  });
  return getFinding(db, scope, id);
}

export function acknowledgeFinding(db: Db, scope: SiteScope, actor: string, id: string, comment?: string | null): Promise<FindingDetail> {
  return transition(db, scope, actor, id, "acknowledged", comment?.trim() || null);
}

export function resolveFinding(db: Db, scope: SiteScope, actor: string, id: string, comment: string): Promise<FindingDetail> {
  return transition(db, scope, actor, id, "resolved", comment.trim());
}

/**
 * Acknowledge several findings at once: all or nothing. Every id must be a finding the caller
 * can see (else 404 and nothing changes); resolved ones are refused (409); already acknowledged
 * ones count as done.
 */
export async function acknowledgeFindings(db: Db, scope: SiteScope, actor: string, ids: string[], comment?: string | null): Promise<{ acknowledged: number }> {
  const unique = [...new Set(ids.map((id) => requireUuid(id, "finding")))];
  const note = comment?.trim() || null;
  return db.transaction(async (tx) => {
    const rows = (
      await tx.execute<{ id: string; state: string; severity: string; kind: string }>(sql`
        select f.id, f.state, f.severity, f.kind ${FROM}
        where f.organisation_id = ${scope.organisationId} and f.id in (${sql.join(unique.map((id) => sql`${id}::uuid`), sql`, `)}) and ${machineScopeSql(scope)}
        order by f.id for update of f`)
    ).rows;
    if (rows.length !== unique.length) throw notFound("finding");
    if (rows.some((r) => r.state === "resolved")) throw new DomainError("finding_resolved", "Some of these findings are already resolved.", { status: 409 });
    const toAck = rows.filter((r) => r.state === "open");
    if (toAck.length > 0) {
      const idList = sql.join(toAck.map((r) => sql`${r.id}::uuid`), sql`, `);
      await tx.execute(sql`update finding set state = 'acknowledged', updated_at = now(), alert_pending = 0 where organisation_id = ${scope.organisationId} and id in (${idList})`);
      await tx.execute(sql`insert into finding_event (organisation_id, finding_id, state, severity, actor_id, comment)
        select ${scope.organisationId}, f.id, 'acknowledged', f.severity, ${actor}, ${note} from finding f where f.organisation_id = ${scope.organisationId} and f.id in (${idList})`);
      await recordAudit(tx, { organisationId: scope.organisationId, actor, action: "finding.acknowledge", targetType: "finding", targetId: null, detail: { ids: toAck.map((r) => r.id), comment: note } });
    }
    return { acknowledged: rows.length };
  });
}

export type FindingSeriesPoint = { hour: string; value: number | null };
export type FindingSeries = { metric: string; unit: string; threshold: number | null; windowStart: string | null; windowEnd: string | null; points: FindingSeriesPoint[] };

/** The hourly metric each kind is judged on, from the rollups (share or rate per hour). */
const SERIES_SQL: Partial<Record<FindingKind, { metric: string; unit: string; value: SQL }>> = {
  saturation: { metric: "saturation.share", unit: "share", value: sql`case when samples > 0 then (sat_samples / samples)::float8 end` },
  windup: { metric: "windup.share", unit: "share", value: sql`case when samples > 0 then (clamp_samples / samples)::float8 end` },
  oscillation: { metric: "oscillation.detectionsPerHour", unit: "per hour", value: sql`case when seconds > 0 then (osc_count * 3600 / seconds)::float8 end` },
  drift: { metric: "iae.perSecond", unit: "process unit", value: sql`case when seconds > 0 then (iae / seconds)::float8 end` },
  silent: { metric: "digests.perHour", unit: "digests", value: sql`digests::float8` },
  config_rejected: { metric: "digests.perHour", unit: "digests", value: sql`digests::float8` },
};

/**
 * The finding's metric per hour over the 14 days up to its last update (or now while open), from
 * the hourly rollups, with its threshold and the window that tripped it (for the finding's chart).
 */
export async function getFindingSeries(db: Db, scope: SiteScope, findingId: string, { days = 14, now = new Date() }: { days?: number; now?: Date } = {}): Promise<FindingSeries> {
  const row = await findingRow(db, scope, findingId);
  const spec = SERIES_SQL[row.kind]!;
  const end = row.state === "resolved" && row.resolved_at ? new Date(iso(row.resolved_at)!) : now;
  const start = new Date(end.getTime() - days * 86_400_000);
  const points = await db.execute<{ hour: Date | string; value: number | null }>(sql`
    select hour, ${spec.value} as value from loop_hour
    where organisation_id = ${scope.organisationId} and loop_id = ${row.loop_id}::uuid and hour >= ${start.toISOString()}::timestamptz and hour <= ${end.toISOString()}::timestamptz
    order by hour`);
  // The drift chart plots IAE per second; its threshold is in baseline standard deviations, so
  // the line shown is the baseline mean plus h standard deviations.
  let threshold = row.evidence.threshold;
  if (row.kind === "drift") {
    const mean = Number(row.evidence.figures.baselineMean);
    const std = Number(row.evidence.figures.baselineStd);
    threshold = Number.isFinite(mean) && Number.isFinite(std) && row.evidence.threshold !== null ? mean + row.evidence.threshold * std : null;
  }
  if (row.kind === "silent" || row.kind === "config_rejected") threshold = null;
  return {
    metric: spec.metric,
    unit: spec.unit,
    threshold,
    windowStart: row.evidence.windowStart,
    windowEnd: row.evidence.windowEnd,
    points: points.rows.map((p) => ({ hour: iso(p.hour)!, value: p.value === null ? null : Number(p.value) })),
  };
}
