// Versioned gain sets for a loop template, and every state change they went through.
// A draft may be edited only by making a new version; from `proposed` on a row's gains never
// change (the app has no path for it). The bench saves drafts; the gain-set pages propose,
// approve and reject; releases (releases.ts) move approved sets to released / retired.
import { sql } from "drizzle-orm";
import { doublePrecision, foreignKey, index, integer, jsonb, pgTable, primaryKey, text, timestamp, uniqueIndex, uuid } from "drizzle-orm/pg-core";
import { organisation } from "./auth";
import { loopTemplate, type StoredGains } from "./fleet";
import type { EnteredGains, GainSetAntiWindup, GainSetChecks, GainSetForm, GainSetMargins, GainSetState } from "~/lib/gain-sets/types";

export { GAIN_SET_STATES, type GainSetState } from "~/lib/gain-sets/types";

/** Where a gain set came from: the model and rule it was derived with, and its figures. */
export type GainSetOrigin = {
  rule: string | null;
  controller: string | null;
  model: { gain: number; timeConstant: number; deadTime: number } | null;
  figures: Record<string, number | null>;
};

export const gainSet = pgTable(
  "gain_set",
  {
    organisationId: text("organisation_id")
      .notNull()
      .references(() => organisation.id, { onDelete: "cascade" }),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    loopTemplateId: uuid("loop_template_id").notNull(),
    /** 1, 2, 3 … per loop template. */
    version: integer("version").notNull(),
    state: text("state").$type<GainSetState>().notNull().default("draft"),
    /** The form the engineer entered the gains in. */
    form: text("form").$type<GainSetForm>().notNull().default("parallel"),
    /** The gains as entered (null on rows saved before this column: then `gains`). */
    enteredGains: jsonb("entered_gains").$type<EnteredGains>(),
    /** Parallel form, as devices receive them. */
    gains: jsonb("gains").$type<StoredGains>().notNull(),
    /** Derivative filter N (Tf = Td/N); null = the controller's default 10. */
    filterN: doublePrecision("filter_n"),
    /** Set-point weight b on the proportional term. */
    setpointWeight: doublePrecision("setpoint_weight").notNull().default(1),
    antiWindup: text("anti_windup").$type<GainSetAntiWindup>().notNull().default("clamp"),
    /** Back-calculation tracking time Tt (s); null = the controller's default. */
    trackingTimeS: doublePrecision("tracking_time_s"),
    /** Output and integrator limits and sample period; null on old rows = the template's. */
    outputMin: doublePrecision("output_min"),
    outputMax: doublePrecision("output_max"),
    integratorMin: doublePrecision("integrator_min"),
    integratorMax: doublePrecision("integrator_max"),
    samplePeriodS: doublePrecision("sample_period_s"),
    /** Plant model, rule and simulated figures it came from (the bench fills these). */
    origin: jsonb("origin").$type<GainSetOrigin>().notNull(),
    /** Margins on the template's reference model, computed when saved. */
    margins: jsonb("margins").$type<GainSetMargins>(),
    /** Rationale. */
    note: text("note").notNull().default(""),
    /** The version this one was copied from ("any change makes a new version"). */
    basedOnId: uuid("based_on_id"),
    createdBy: text("created_by").notNull(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    proposedBy: text("proposed_by"),
    proposedAt: timestamp("proposed_at", { withTimezone: true }),
    /** Who approved or rejected it, and when. */
    decidedBy: text("decided_by"),
    decidedAt: timestamp("decided_at", { withTimezone: true }),
    /** The checks run on proposal, and the written reason when an admin overrode a failure. */
    checks: jsonb("checks").$type<GainSetChecks>(),
    overrideReason: text("override_reason"),
  },
  (t) => [
    primaryKey({ name: "gain_set_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "gain_set_template_fk", columns: [t.organisationId, t.loopTemplateId], foreignColumns: [loopTemplate.organisationId, loopTemplate.id] }).onDelete("cascade"),
    uniqueIndex("gain_set_organisation_template_version_uq").on(t.organisationId, t.loopTemplateId, t.version),
    index("gain_set_organisation_state_idx").on(t.organisationId, t.state),
  ],
);

/** Every state a gain set entered: who, when, and their comment. */
export const gainSetHistory = pgTable(
  "gain_set_history",
  {
    organisationId: text("organisation_id")
      .notNull()
      .references(() => organisation.id, { onDelete: "cascade" }),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    gainSetId: uuid("gain_set_id").notNull(),
    state: text("state").$type<GainSetState>().notNull(),
    actor: text("actor").notNull(),
    comment: text("comment").notNull().default(""),
    at: timestamp("at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "gain_set_history_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "gain_set_history_gain_set_fk", columns: [t.organisationId, t.gainSetId], foreignColumns: [gainSet.organisationId, gainSet.id] }).onDelete("cascade"),
    index("gain_set_history_organisation_gain_set_idx").on(t.organisationId, t.gainSetId, t.at),
  ],
);

