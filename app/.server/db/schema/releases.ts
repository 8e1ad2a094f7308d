// Releases: an approved gain set delivered to a target set of loops in waves (pilot first),
// each loop's offer tracked from the devices' acknowledgements. See app/.server/releases/.
import { sql } from "drizzle-orm";
import { boolean, doublePrecision, foreignKey, index, integer, jsonb, pgTable, primaryKey, text, timestamp, uuid } from "drizzle-orm/pg-core";
import type { ReleaseFigures, ReleasePilotSpec, ReleaseState, ReleaseTargetSpec, TargetState, WaveState } from "~/lib/release/types";
import { organisation } from "./auth";
import { loop, loopTemplate, machine, type StoredGains } from "./fleet";
import { gainSet } from "./gain-sets";

const tenant = () =>
  text("organisation_id")
    .notNull()
    .references(() => organisation.id, { onDelete: "cascade" });

export const release = pgTable(
  "release",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    gainSetId: uuid("gain_set_id").notNull(),
    loopTemplateId: uuid("loop_template_id").notNull(),
    state: text("state").$type<ReleaseState>().notNull().default("pending"),
    target: jsonb("target").$type<ReleaseTargetSpec>().notNull(),
    pilot: jsonb("pilot").$type<ReleasePilotSpec>().notNull(),
    guardWindowMinutes: integer("guard_window_minutes").notNull(),
    /** Null = the defaults in app/lib/release/guard.ts. */
    maxIaeIncrease: doublePrecision("max_iae_increase"),
    maxRejectShare: doublePrecision("max_reject_share"),
    /** Machines the starter confirmed by typing their number. */
    machineCount: integer("machine_count").notNull(),
    heldReason: text("held_reason"),
    figures: jsonb("figures").$type<ReleaseFigures>(),
    createdBy: text("created_by").notNull(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    /** When the pilot was offered; the guard's "after" period and the control period start here. */
    startedAt: timestamp("started_at", { withTimezone: true }),
    /** End of the current guard window (set when the pilot is offered, again on resume). */
    guardEndsAt: timestamp("guard_ends_at", { withTimezone: true }),
    completedAt: timestamp("completed_at", { withTimezone: true }),
    updatedAt: timestamp("updated_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "release_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "release_gain_set_fk", columns: [t.organisationId, t.gainSetId], foreignColumns: [gainSet.organisationId, gainSet.id] }),
    foreignKey({ name: "release_template_fk", columns: [t.organisationId, t.loopTemplateId], foreignColumns: [loopTemplate.organisationId, loopTemplate.id] }),
    index("release_organisation_created_idx").on(t.organisationId, t.createdAt),
    index("release_state_idx").on(t.state),
  ],
);

export const releaseWave = pgTable(
  "release_wave",
  {
    organisationId: tenant(),
    releaseId: uuid("release_id").notNull(),
    /** 0 = pilot. */
    index: integer("index").notNull(),
    state: text("state").$type<WaveState>().notNull().default("pending"),
    offeredAt: timestamp("offered_at", { withTimezone: true }),
    completedAt: timestamp("completed_at", { withTimezone: true }),
  },
  (t) => [
    primaryKey({ name: "release_wave_pk", columns: [t.organisationId, t.releaseId, t.index] }),
    foreignKey({ name: "release_wave_release_fk", columns: [t.organisationId, t.releaseId], foreignColumns: [release.organisationId, release.id] }).onDelete("cascade"),
  ],
);

export const releaseTarget = pgTable(
  "release_target",
  {
    organisationId: tenant(),
    releaseId: uuid("release_id").notNull(),
    loopId: uuid("loop_id").notNull(),
    machineId: uuid("machine_id").notNull(),
    wave: integer("wave").notNull(),
    /** A later prediction may exclude a loop; excluded targets are never offered. */
    include: boolean("include").notNull().default(true),
    excludeReason: text("exclude_reason"),
    state: text("state").$type<TargetState>().notNull().default("pending"),
    /** The loop's configuration version carrying this release. */
    version: integer("version"),
    /** What the loop had before the offer, for roll back. */
    previousGainSetId: uuid("previous_gain_set_id"),
    previousGains: jsonb("previous_gains").$type<StoredGains>(),
    previousVersion: integer("previous_version"),
    offeredAt: timestamp("offered_at", { withTimezone: true }),
    ackedAt: timestamp("acked_at", { withTimezone: true }),
    rejectReason: text("reject_reason"),
    /** Roll back, tracked the same way: the previous gains offered as a new, higher version. */
    rollbackState: text("rollback_state").$type<TargetState>(),
    rollbackVersion: integer("rollback_version"),
  },
  (t) => [
    primaryKey({ name: "release_target_pk", columns: [t.organisationId, t.releaseId, t.loopId] }),
    foreignKey({ name: "release_target_release_fk", columns: [t.organisationId, t.releaseId], foreignColumns: [release.organisationId, release.id] }).onDelete("cascade"),
    foreignKey({ name: "release_target_loop_fk", columns: [t.organisationId, t.loopId], foreignColumns: [loop.organisationId, loop.id] }).onDelete("cascade"),
    foreignKey({ name: "release_target_machine_fk", columns: [t.organisationId, t.machineId], foreignColumns: [machine.organisationId, machine.id] }).onDelete("cascade"),
    index("release_target_organisation_loop_idx").on(t.organisationId, t.loopId),
  ],
);
