// The fleet registry: machine models with their loop templates, deployed machines and each
// machine's loops. Tenant tables lead with organisation_id (composite keys and FKs) so a row
// can never point across organisations.
import { sql } from "drizzle-orm";
import {
  doublePrecision,
  foreignKey,
  index,
  integer,
  jsonb,
  pgTable,
  primaryKey,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";
import { organisation } from "./auth";
import { site } from "./customers";
import type { HealthThresholdSettings } from "~/lib/health/assess";
import type { FopdtModel, IpdtModel, SopdtModel } from "~/lib/control/plant";

const tenant = () =>
  text("organisation_id")
    .notNull()
    .references(() => organisation.id, { onDelete: "cascade" });

/** Parallel-form gains (kp, ki per second, kd in seconds). */
export type StoredGains = { kp: number; ki: number; kd: number };
/** Allowed range of each gain; a gain set outside it is refused. */
export type GainEnvelope = { kp: [number, number]; ki: [number, number]; kd: [number, number] };
/** The plant a template's gain sets are checked against before they can be proposed. */
export type ReferenceModel = FopdtModel | SopdtModel | IpdtModel;
/** Limits at which health findings are raised (practice defaults, per template). */
export type HealthThresholds = HealthThresholdSettings & {
  /** Ultimate period estimate Tu in seconds for the load-disturbance limit. */
  ultimatePeriod: number;
};

export const machineModel = pgTable(
  "machine_model",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    name: text("name").notNull(),
    description: text("description").notNull().default(""),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "machine_model_pk", columns: [t.organisationId, t.id] }),
    uniqueIndex("machine_model_organisation_name_uq").on(t.organisationId, t.name),
  ],
);

export const loopTemplate = pgTable(
  "loop_template",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    modelId: uuid("model_id").notNull(),
    /** Stable key the device uses, e.g. `zone_1`. */
    key: text("key").notNull(),
    name: text("name").notNull(),
    unit: text("unit").notNull(),
    outputUnit: text("output_unit").notNull().default("%"),
    samplePeriodS: doublePrecision("sample_period_s").notNull(),
    /** `parallel` or `standard`: the form the device's controller is written in. */
    controllerForm: text("controller_form").notNull().default("parallel"),
    outputMin: doublePrecision("output_min").notNull(),
    outputMax: doublePrecision("output_max").notNull(),
    defaultGains: jsonb("default_gains").$type<StoredGains>().notNull(),
    gainEnvelope: jsonb("gain_envelope").$type<GainEnvelope>().notNull(),
    thresholds: jsonb("thresholds").$type<HealthThresholds>().notNull(),
    /** Reference plant for the closed-loop check on proposal; null = the check fails (admins may override). */
    referenceModel: jsonb("reference_model").$type<ReferenceModel>(),
    /** Minimum gain margin (factor) and phase margin (degrees) a proposed gain set must keep. */
    minGainMargin: doublePrecision("min_gain_margin").notNull().default(2),
    minPhaseMarginDeg: doublePrecision("min_phase_margin_deg").notNull().default(30),
    position: integer("position").notNull().default(0),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "loop_template_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "loop_template_model_fk", columns: [t.organisationId, t.modelId], foreignColumns: [machineModel.organisationId, machineModel.id] }).onDelete("cascade"),
    uniqueIndex("loop_template_organisation_model_key_uq").on(t.organisationId, t.modelId, t.key),
  ],
);

export const machine = pgTable(
  "machine",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    serial: text("serial").notNull(),
    modelId: uuid("model_id").notNull(),
    siteId: uuid("site_id").notNull(),
    firmware: text("firmware"),
    /** `active` or `decommissioned` */
    status: text("status").notNull().default("active"),
    lastSeenAt: timestamp("last_seen_at", { withTimezone: true }),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    decommissionedAt: timestamp("decommissioned_at", { withTimezone: true }),
  },
  (t) => [
    primaryKey({ name: "machine_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "machine_model_fk", columns: [t.organisationId, t.modelId], foreignColumns: [machineModel.organisationId, machineModel.id] }),
    foreignKey({ name: "machine_site_fk", columns: [t.organisationId, t.siteId], foreignColumns: [site.organisationId, site.id] }),
    uniqueIndex("machine_organisation_serial_uq").on(t.organisationId, t.serial),
    uniqueIndex("machine_id_uq").on(t.id),
    index("machine_organisation_site_idx").on(t.organisationId, t.siteId),
    index("machine_organisation_model_idx").on(t.organisationId, t.modelId),
  ],
);

export const loop = pgTable(
  "loop",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    machineId: uuid("machine_id").notNull(),
    templateId: uuid("template_id").notNull(),
    key: text("key").notNull(),
    /** The gains assigned to this loop and their version (monotonic per loop). */
    gains: jsonb("gains").$type<StoredGains>().notNull(),
    configVersion: integer("config_version").notNull().default(1),
    /** The gain set offered (null: the template's defaults); releases set it. */
    gainSetId: uuid("gain_set_id"),
    appliedVersion: integer("applied_version"),
    /** The gain set the loop runs, from its acknowledgements (null: the template's defaults). */
    appliedGainSetId: uuid("applied_gain_set_id"),
    ackStatus: text("ack_status"),
    ackReason: text("ack_reason"),
    ackedAt: timestamp("acked_at", { withTimezone: true }),
    /** Health summary refreshed from recent digests (see app/.server/fleet/health.ts). */
    healthBand: text("health_band"),
    healthScore: integer("health_score"),
    healthReasons: jsonb("health_reasons").$type<string[]>().notNull().default([]),
    lastDigestAt: timestamp("last_digest_at", { withTimezone: true }),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "loop_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "loop_machine_fk", columns: [t.organisationId, t.machineId], foreignColumns: [machine.organisationId, machine.id] }).onDelete("cascade"),
    foreignKey({ name: "loop_template_fk", columns: [t.organisationId, t.templateId], foreignColumns: [loopTemplate.organisationId, loopTemplate.id] }),
    uniqueIndex("loop_organisation_machine_key_uq").on(t.organisationId, t.machineId, t.key),
    index("loop_organisation_template_idx").on(t.organisationId, t.templateId),
  ],
);
