// Devices (a machine's controller board and its enrolled public key), one-time enrolment
// codes, seen JWT ids for replay refusal, and each organisation's config-signing keys.
import { sql } from "drizzle-orm";
import { foreignKey, index, jsonb, pgTable, primaryKey, text, timestamp, uniqueIndex, uuid } from "drizzle-orm/pg-core";
import { organisation } from "./auth";
import { machine } from "./fleet";

const tenant = () =>
  text("organisation_id")
    .notNull()
    .references(() => organisation.id, { onDelete: "cascade" });

export const device = pgTable(
  "device",
  {
    organisationId: tenant(),
    /** Also the JWT `kid` and `iss`. */
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    machineId: uuid("machine_id").notNull(),
    /** `EdDSA` or `ES256` */
    alg: text("alg").notNull(),
    publicJwk: jsonb("public_jwk").$type<Record<string, string>>().notNull(),
    thumbprint: text("thumbprint").notNull(),
    firmware: text("firmware"),
    /** `active` or `revoked` */
    status: text("status").notNull().default("active"),
    enrolledAt: timestamp("enrolled_at", { withTimezone: true }).notNull().defaultNow(),
    revokedAt: timestamp("revoked_at", { withTimezone: true }),
  },
  (t) => [
    primaryKey({ name: "device_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "device_machine_fk", columns: [t.organisationId, t.machineId], foreignColumns: [machine.organisationId, machine.id] }).onDelete("cascade"),
    uniqueIndex("device_id_uq").on(t.id),
    index("device_organisation_machine_idx").on(t.organisationId, t.machineId),
  ],
);

export const enrolmentCode = pgTable(
  "enrolment_code",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    machineId: uuid("machine_id").notNull(),
    /** SHA-256 of the code; the code itself is shown once and never stored. */
    codeHash: text("code_hash").notNull(),
    expiresAt: timestamp("expires_at", { withTimezone: true }).notNull(),
    usedAt: timestamp("used_at", { withTimezone: true }),
    /** Set when a newer code replaced this one. */
    supersededAt: timestamp("superseded_at", { withTimezone: true }),
    createdBy: text("created_by").notNull(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "enrolment_code_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "enrolment_code_machine_fk", columns: [t.organisationId, t.machineId], foreignColumns: [machine.organisationId, machine.id] }).onDelete("cascade"),
    uniqueIndex("enrolment_code_hash_uq").on(t.codeHash),
    index("enrolment_code_organisation_machine_idx").on(t.organisationId, t.machineId),
  ],
);

/** JWT ids already used, kept until the token would have expired anyway. */
export const deviceJti = pgTable(
  "device_jti",
  {
    organisationId: tenant(),
    deviceId: uuid("device_id").notNull(),
    jti: text("jti").notNull(),
    expiresAt: timestamp("expires_at", { withTimezone: true }).notNull(),
  },
  (t) => [
    primaryKey({ name: "device_jti_pk", columns: [t.organisationId, t.deviceId, t.jti] }),
    index("device_jti_expires_idx").on(t.expiresAt),
  ],
);

export const organisationSigningKey = pgTable(
  "organisation_signing_key",
  {
    organisationId: tenant(),
    /** The JWS `kid`. */
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    alg: text("alg").notNull().default("EdDSA"),
    publicJwk: jsonb("public_jwk").$type<Record<string, string>>().notNull(),
    privateJwk: jsonb("private_jwk").$type<Record<string, string>>().notNull(),
    /**
     * `active` signs (one per organisation); `retired` stays in the JWKS for verification only
     * during the overlap after a rotation; `withdrawn` is no longer published.
     */
    status: text("status").notNull().default("active"),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    /** When a rotation replaced it; the overlap is counted from here. */
    retiredAt: timestamp("retired_at", { withTimezone: true }),
    withdrawnAt: timestamp("withdrawn_at", { withTimezone: true }),
  },
  (t) => [
    primaryKey({ name: "organisation_signing_key_pk", columns: [t.organisationId, t.id] }),
    index("organisation_signing_key_status_idx").on(t.organisationId, t.status),
    uniqueIndex("organisation_signing_key_one_active_uq").on(t.organisationId).where(sql`status = 'active'`),
  ],
);
