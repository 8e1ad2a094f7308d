// Reading the audit log: filtered, paginated, and as CSV. There is no write path here
// besides recordAudit (record-audit.ts), and none that updates or deletes.
import { and, count, desc, eq, gte, lte, sql, type SQL } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { auditEvent } from "~/.server/db/schema";
import { toCsv } from "~/lib/csv";
import type { AuditQuery } from "~/lib/gain-sets/schemas";
import { describeActors } from "./actors";

/** Most rows one CSV export holds (newest first). */
export const AUDIT_CSV_LIMIT = 10_000;

function conditions(organisationId: string, query: Pick<AuditQuery, "from" | "to" | "actorId" | "action">): SQL {
  const where: SQL[] = [eq(auditEvent.organisationId, organisationId)];
  if (query.from) where.push(gte(auditEvent.createdAt, query.from));
  if (query.to) where.push(lte(auditEvent.createdAt, query.to));
  if (query.actorId) where.push(eq(auditEvent.actor, query.actorId));
  // `gain_set` matches every gain_set.* action; `gain_set.approved` only itself.
  if (query.action) where.push(query.action.includes(".") ? eq(auditEvent.action, query.action) : sql`split_part(${auditEvent.action}, '.', 1) = ${query.action}`);
  return and(...where)!;
}

export type AuditItem = {
  id: string;
  at: string;
  actor: { id: string; name: string; email: string | null; kind: string };
  action: string;
  targetType: string;
  targetId: string | null;
  detail: Record<string, unknown>;
  before: Record<string, unknown> | null;
  after: Record<string, unknown> | null;
};

export async function listAuditEvents(db: Db, { organisationId }: { organisationId: string }, query: Pick<AuditQuery, "from" | "to" | "actorId" | "action" | "page" | "pageSize">) {
  const where = conditions(organisationId, query);
  const [rows, [{ total }]] = (await Promise.all([
    db
      .select()
      .from(auditEvent)
      .where(where)
      .orderBy(desc(auditEvent.createdAt), desc(auditEvent.id))
      .limit(query.pageSize)
      .offset((query.page - 1) * query.pageSize),
    db.select({ total: count() }).from(auditEvent).where(where),
  ])) as [Array<typeof auditEvent.$inferSelect>, [{ total: number }]];
  const names = await describeActors(db, { organisationId }, rows.map((r) => r.actor));
  const items: AuditItem[] = rows.map((r) => ({
    id: r.id,
    at: r.createdAt.toISOString(),
    actor: names.get(r.actor)!,
    action: r.action,
    targetType: r.targetType,
    targetId: r.targetId,
    detail: r.detail,
    before: r.before,
    after: r.after,
  }));
  return { items, total, page: query.page, pageSize: query.pageSize };
}

/** The filtered log as CSV (newest first, at most AUDIT_CSV_LIMIT rows). */
export async function exportAuditCsv(db: Db, scope: { organisationId: string }, query: Pick<AuditQuery, "from" | "to" | "actorId" | "action">): Promise<string> {
  const { items } = await listAuditEvents(db, scope, { ...query, page: 1, pageSize: AUDIT_CSV_LIMIT });
  const json = (value: unknown) => (value === null || value === undefined ? "" : JSON.stringify(value));
  return toCsv(
    ["at", "actorId", "actor", "action", "targetType", "targetId", "detail", "before", "after"],
    items.map((i) => [i.at, i.actor.id, i.actor.name, i.action, i.targetType, i.targetId ?? "", json(i.detail), json(i.before), json(i.after)]),
  );
}

/** Actions and actors that occur in the log, for the page's filters. */
export async function listAuditFacets(db: Db, { organisationId }: { organisationId: string }) {
  const [actions, actors] = await Promise.all([
    db.selectDistinct({ action: auditEvent.action }).from(auditEvent).where(eq(auditEvent.organisationId, organisationId)).orderBy(auditEvent.action),
    db.selectDistinct({ actor: auditEvent.actor }).from(auditEvent).where(eq(auditEvent.organisationId, organisationId)),
  ]);
  const names = await describeActors(db, { organisationId }, actors.map((a) => a.actor));
  return {
    actions: actions.map((a) => a.action),
    actors: [...names.values()].sort((a, b) => a.name.localeCompare(b.name)),
  };
}
