// Versioned gain sets for a loop template. The tuning bench saves
// drafts; the release work moves them through proposed → approved → released.
import { sql } from "drizzle-orm";
import { doublePrecision, foreignKey, index, integer, jsonb, pgTable, primaryKey, text, timestamp, uniqueIndex, uuid } from "drizzle-orm/pg-core";
import { organisation } from "./auth";
import { loopTemplate, type StoredGains } from "./fleet";

export const GAIN_SET_STATES = ["draft", "proposed", "approved", "released", "retired", "rejected"] as const;
export type GainSetState = (typeof GAIN_SET_STATES)[number];

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
    /** Parallel form, as devices receive them. */
    gains: jsonb("gains").$type<StoredGains>().notNull(),
    filterN: doublePrecision("filter_n"),
    origin: jsonb("origin").$type<GainSetOrigin>().notNull(),
    note: text("note").notNull().default(""),
    createdBy: text("created_by").notNull(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "gain_set_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "gain_set_template_fk", columns: [t.organisationId, t.loopTemplateId], foreignColumns: [loopTemplate.organisationId, loopTemplate.id] }).onDelete("cascade"),
    uniqueIndex("gain_set_organisation_template_version_uq").on(t.organisationId, t.loopTemplateId, t.version),
    index("gain_set_organisation_state_idx").on(t.organisationId, t.state),
  ],
);
