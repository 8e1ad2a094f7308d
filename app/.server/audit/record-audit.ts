import type { Db } from "~/.server/db/client";
import { auditEvent } from "~/.server/db/schema";

export type AuditEntry = {
  organisationId: string;
  actor: string;
  action: string;
  targetType: string;
  targetId?: string | null;
  detail?: Record<string, unknown>;
};

/** Append one event to the tenant's audit log (inside the caller's transaction when given one). */
export async function recordAudit(db: Db, entry: AuditEntry): Promise<void> {
  await db.insert(auditEvent).values({ ...entry, targetId: entry.targetId ?? null, detail: entry.detail ?? {} });
}
