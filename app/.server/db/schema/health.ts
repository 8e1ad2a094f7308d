// Loop health: hourly rollups kept by ingest, daily snapshots and current figures kept by the
// evaluation job, findings with their history, alert subscriptions and deliveries, and retune
// requests (DEVELOPERS.md, "Loop health"). Tenant first in every key.
import { sql } from "drizzle-orm";
import {
  bigint,
  date,
  foreignKey,
  index,
  integer,
  jsonb,
  numeric,
  pgTable,
  primaryKey,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";
import type { FindingEvidence } from "~/lib/health/api-types";
import type { LoopHealthFigures } from "~/lib/health/figures";
import { member, organisation } from "./auth";
import { loop, machine } from "./fleet";

const tenant = () =>
  text("organisation_id")
    .notNull()
    .references(() => organisation.id, { onDelete: "cascade" });

/**
 * One loop's digests per hour of window start, summed as they arrive (in numeric, so the sums
 * are exact and the same in any order) (the device_ingest
 * statement adds each newly claimed digest once, so retries never count twice and any arrival
 * order gives the same sums). No foreign key, like digest_seq: the check would lock the loop row
 * on the hot path; a statement trigger on loop deletes a deleted loop's rows.
 */
export const loopHour = pgTable(
  "loop_hour",
  {
    organisationId: text("organisation_id").notNull(),
    loopId: uuid("loop_id").notNull(),
    hour: timestamp("hour", { withTimezone: true }).notNull(),
    digests: integer("digests").notNull(),
    samples: bigint("samples", { mode: "number" }).notNull(),
    seconds: numeric("seconds").notNull(),
    iae: numeric("iae").notNull(),
    /** Σ (satHighFrac + satLowFrac) · samples */
    satSamples: numeric("sat_samples").notNull(),
    /** Σ intClampFrac · samples */
    clampSamples: numeric("clamp_samples").notNull(),
    /** Σ min(intClampFrac, satHighFrac + satLowFrac) · samples (windup.ts's pinned share) */
    pinnedSamples: numeric("pinned_samples").notNull(),
    /** Σ errRms² · samples */
    err2Samples: numeric("err2_samples").notNull(),
    oscCount: bigint("osc_count", { mode: "number" }).notNull(),
    lastWindowEnd: timestamp("last_window_end", { withTimezone: true }).notNull(),
    /** The highest gain version among the hour's windows. */
    gainVersion: integer("gain_version").notNull(),
  },
  (t) => [primaryKey({ name: "loop_hour_pk", columns: [t.organisationId, t.loopId, t.hour] })],
);

/** A loop's band and score per UTC day (the 30-day trend), written by the evaluation job. */
export const loopHealthDay = pgTable(
  "loop_health_day",
  {
    organisationId: tenant(),
    loopId: uuid("loop_id").notNull(),
    day: date("day", { mode: "string" }).notNull(),
    band: text("band").notNull(),
    score: integer("score"),
  },
  (t) => [
    primaryKey({ name: "loop_health_day_pk", columns: [t.organisationId, t.loopId, t.day] }),
    foreignKey({ name: "loop_health_day_loop_fk", columns: [t.organisationId, t.loopId], foreignColumns: [loop.organisationId, loop.id] }).onDelete("cascade"),
    index("loop_health_day_organisation_day_idx").on(t.organisationId, t.day),
  ],
);

/** A loop's latest figures (loopHealthFigures) as the evaluation job computed them. */
export const loopHealthFiguresTable = pgTable(
  "loop_health",
  {
    organisationId: tenant(),
    loopId: uuid("loop_id").notNull(),
    figures: jsonb("figures").$type<LoopHealthFigures>().notNull(),
    evaluatedAt: timestamp("evaluated_at", { withTimezone: true }).notNull(),
  },
  (t) => [
    primaryKey({ name: "loop_health_pk", columns: [t.organisationId, t.loopId] }),
    foreignKey({ name: "loop_health_loop_fk", columns: [t.organisationId, t.loopId], foreignColumns: [loop.organisationId, loop.id] }).onDelete("cascade"),
  ],
);

export const finding = pgTable(
  "finding",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    machineId: uuid("machine_id").notNull(),
    loopId: uuid("loop_id").notNull(),
    kind: text("kind").notNull(),
    severity: text("severity").notNull(),
    state: text("state").notNull().default("open"),
    summary: text("summary").notNull(),
    evidence: jsonb("evidence").$type<FindingEvidence>().notNull(),
    openedAt: timestamp("opened_at", { withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp("updated_at", { withTimezone: true }).notNull().defaultNow(),
    resolvedAt: timestamp("resolved_at", { withTimezone: true }),
    /** Since when the condition has been clear (auto-resolve after the template's time). */
    clearSince: timestamp("clear_since", { withTimezone: true }),
    /** Set when opened or escalated; cleared once the alert job has handled it. */
    alertPending: integer("alert_pending").notNull().default(1),
  },
  (t) => [
    primaryKey({ name: "finding_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "finding_loop_fk", columns: [t.organisationId, t.loopId], foreignColumns: [loop.organisationId, loop.id] }).onDelete("cascade"),
    foreignKey({ name: "finding_machine_fk", columns: [t.organisationId, t.machineId], foreignColumns: [machine.organisationId, machine.id] }).onDelete("cascade"),
    uniqueIndex("finding_one_open_uq").on(t.organisationId, t.loopId, t.kind).where(sql`state in ('open', 'acknowledged')`),
    index("finding_organisation_state_updated_idx").on(t.organisationId, t.state, t.updatedAt),
    index("finding_organisation_machine_idx").on(t.organisationId, t.machineId),
    index("finding_alert_pending_idx").on(t.organisationId).where(sql`alert_pending = 1`),
  ],
);

export const findingEvent = pgTable(
  "finding_event",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    findingId: uuid("finding_id").notNull(),
    at: timestamp("at", { withTimezone: true }).notNull().defaultNow(),
    state: text("state").notNull(),
    severity: text("severity"),
    /** The user who acted; null for the evaluation job. */
    actorId: text("actor_id"),
    comment: text("comment"),
  },
  (t) => [
    primaryKey({ name: "finding_event_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "finding_event_finding_fk", columns: [t.organisationId, t.findingId], foreignColumns: [finding.organisationId, finding.id] }).onDelete("cascade"),
    index("finding_event_finding_idx").on(t.organisationId, t.findingId, t.at),
  ],
);

/** A member's alert settings (no row: the role's defaults). */
export const alertSubscription = pgTable(
  "alert_subscription",
  {
    organisationId: tenant(),
    memberId: text("member_id").notNull(),
    kinds: text("kinds").array().notNull(),
    minSeverity: text("min_severity").notNull(),
    siteIds: uuid("site_ids").array().notNull(),
    summaryAfter: integer("summary_after").notNull(),
    updatedAt: timestamp("updated_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "alert_subscription_pk", columns: [t.organisationId, t.memberId] }),
    foreignKey({ name: "alert_subscription_member_fk", columns: [t.organisationId, t.memberId], foreignColumns: [member.organizationId, member.id] }).onDelete("cascade"),
  ],
);

/**
 * One e-mail per (finding, recipient): the idempotency key. A retried job finds the row and
 * sends nothing for a key already `sent`. Summary e-mails claim every finding they list.
 */
export const alertDelivery = pgTable(
  "alert_delivery",
  {
    organisationId: tenant(),
    key: text("key").notNull(),
    findingId: uuid("finding_id").notNull(),
    memberId: text("member_id").notNull(),
    /** The e-mail that carries it: `finding:<id>:<member>` or `summary:<member>:<first finding>`. */
    emailKey: text("email_key").notNull(),
    status: text("status").notNull().default("pending"),
    emailId: text("email_id"),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    sentAt: timestamp("sent_at", { withTimezone: true }),
  },
  (t) => [
    primaryKey({ name: "alert_delivery_pk", columns: [t.organisationId, t.key] }),
    foreignKey({ name: "alert_delivery_finding_fk", columns: [t.organisationId, t.findingId], foreignColumns: [finding.organisationId, finding.id] }).onDelete("cascade"),
    index("alert_delivery_email_idx").on(t.organisationId, t.emailKey),
  ],
);

export const retuneRequest = pgTable(
  "retune_request",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    machineId: uuid("machine_id").notNull(),
    loopId: uuid("loop_id"),
    observation: text("observation").notNull(),
    state: text("state").notNull().default("open"),
    requestedBy: text("requested_by"),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp("updated_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "retune_request_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "retune_request_machine_fk", columns: [t.organisationId, t.machineId], foreignColumns: [machine.organisationId, machine.id] }).onDelete("cascade"),
    index("retune_request_organisation_state_idx").on(t.organisationId, t.state, t.updatedAt),
    index("retune_request_machine_idx").on(t.organisationId, t.machineId),
  ],
);

export const retuneEvent = pgTable(
  "retune_event",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    requestId: uuid("request_id").notNull(),
    at: timestamp("at", { withTimezone: true }).notNull().defaultNow(),
    state: text("state").notNull(),
    actorId: text("actor_id"),
    comment: text("comment"),
  },
  (t) => [
    primaryKey({ name: "retune_event_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "retune_event_request_fk", columns: [t.organisationId, t.requestId], foreignColumns: [retuneRequest.organisationId, retuneRequest.id] }).onDelete("cascade"),
    index("retune_event_request_idx").on(t.organisationId, t.requestId, t.at),
  ],
);
