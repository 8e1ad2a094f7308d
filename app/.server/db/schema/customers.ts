// The OEM's customers, their sites, and which site managers look after which sites.
import { sql } from "drizzle-orm";
import { foreignKey, index, pgTable, primaryKey, text, timestamp, uniqueIndex, uuid } from "drizzle-orm/pg-core";
import { member, organisation } from "./auth";

const tenant = () =>
  text("organisation_id")
    .notNull()
    .references(() => organisation.id, { onDelete: "cascade" });

export const customer = pgTable(
  "customer",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    name: text("name").notNull(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "customer_pk", columns: [t.organisationId, t.id] }),
    uniqueIndex("customer_organisation_name_uq").on(t.organisationId, t.name),
  ],
);

export const site = pgTable(
  "site",
  {
    organisationId: tenant(),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    customerId: uuid("customer_id").notNull(),
    name: text("name").notNull(),
    /** IANA time zone, e.g. Europe/Oslo */
    timeZone: text("time_zone").notNull().default("UTC"),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "site_pk", columns: [t.organisationId, t.id] }),
    foreignKey({ name: "site_customer_fk", columns: [t.organisationId, t.customerId], foreignColumns: [customer.organisationId, customer.id] }).onDelete("cascade"),
    uniqueIndex("site_organisation_customer_name_uq").on(t.organisationId, t.customerId, t.name),
  ],
);

/** A site manager (member with role site_manager) sees the sites assigned here. */
export const siteAssignment = pgTable(
  "site_assignment",
  {
    organisationId: tenant(),
    memberId: text("member_id").notNull(),
    siteId: uuid("site_id").notNull(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    primaryKey({ name: "site_assignment_pk", columns: [t.organisationId, t.memberId, t.siteId] }),
    foreignKey({ name: "site_assignment_member_fk", columns: [t.organisationId, t.memberId], foreignColumns: [member.organizationId, member.id] }).onDelete("cascade"),
    foreignKey({ name: "site_assignment_site_fk", columns: [t.organisationId, t.siteId], foreignColumns: [site.organisationId, site.id] }).onDelete("cascade"),
    index("site_assignment_site_idx").on(t.organisationId, t.siteId),
  ],
);
