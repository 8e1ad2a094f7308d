import { sql } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { auditEvent } from "~/.server/db/schema";

export type AuditEntry = {
  organisationId: string;
  actor: string;
  action: string;
  targetType: string;
  targetId?: string | null;
  detail?: Record<string, unknown>;
  /** The record's fields before the change (omit when it was created). */
  before?: Record<string, unknown> | null;
  /** The record's fields after the change (omit when it was removed). */
  after?: Record<string, unknown> | null;
};

/**
 * Append one event to the tenant's audit log (inside the caller's transaction when given one).
 * The log is append-only: there is no update or delete path, and a trigger refuses both.
 */
export async function recordAudit(db: Db, entry: AuditEntry): Promise<void> {
  await db.insert(auditEvent).values({
    ...entry,
    targetId: entry.targetId ?? null,
    detail: entry.detail ?? {},
    before: entry.before ?? null,
    after: entry.after ?? null,
    // The statement's own time, so several events in one transaction keep their order.
    createdAt: sql`clock_timestamp()`,
  });
}
