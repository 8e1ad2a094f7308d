// The audit log: every change a person or device makes to a tenant's data, append-only.
// A trigger (hand-written in the migration) refuses UPDATE, DELETE and TRUNCATE on it.
import { sql } from "drizzle-orm";
import { index, jsonb, pgTable, primaryKey, text, timestamp, uuid } from "drizzle-orm/pg-core";
import { organisation } from "./auth";

export const auditEvent = pgTable(
  "audit_event",
  {
    organisationId: text("organisation_id")
      .notNull()
      .references(() => organisation.id, { onDelete: "cascade" }),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    /** user id, `device:<id>`, `token:<id>` (an API token) or `system` */
    actor: text("actor").notNull(),
    action: text("action").notNull(),
    targetType: text("target_type").notNull(),
    targetId: text("target_id"),
    detail: jsonb("detail").$type<Record<string, unknown>>().notNull().default({}),
    /** The changed record's fields before and after the change (null: created / removed). */
    before: jsonb("before").$type<Record<string, unknown>>(),
    after: jsonb("after").$type<Record<string, unknown>>(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "audit_event_pk", columns: [t.organisationId, t.id] }),
    index("audit_event_organisation_time_idx").on(t.organisationId, t.createdAt),
    index("audit_event_organisation_actor_time_idx").on(t.organisationId, t.actor, t.createdAt),
    index("audit_event_organisation_action_time_idx").on(t.organisationId, t.action, t.createdAt),
  ],
);
