// Organisation API tokens for integrators. Only the SHA-256 of a token
// is kept, with a short display prefix; the secret itself is shown once and never stored.
import { sql } from "drizzle-orm";
import { index, pgTable, primaryKey, text, timestamp, uniqueIndex, uuid } from "drizzle-orm/pg-core";
import { organisation } from "./auth";

export const apiToken = pgTable(
  "api_token",
  {
    organisationId: text("organisation_id")
      .notNull()
      .references(() => organisation.id, { onDelete: "cascade" }),
    id: uuid("id").notNull().default(sql`gen_random_uuid()`),
    name: text("name").notNull(),
    /** `read` or `write` (see app/lib/access/api-token-scope.ts). */
    scope: text("scope").notNull(),
    /** Hex SHA-256 of the whole token (`fbk_...`). */
    tokenHash: text("token_hash").notNull(),
    /** The first characters after `fbk_`, so people can tell tokens apart. */
    prefix: text("prefix").notNull(),
    /** user id of the member who created it */
    createdBy: text("created_by").notNull(),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    /** Written at most once a minute per token. */
    lastUsedAt: timestamp("last_used_at", { withTimezone: true }),
    /** Optional: the token stops working at this time. */
    expiresAt: timestamp("expires_at", { withTimezone: true }),
    revokedAt: timestamp("revoked_at", { withTimezone: true }),
    revokedBy: text("revoked_by"),
  },
  (t) => [
    primaryKey({ name: "api_token_pk", columns: [t.organisationId, t.id] }),
    // The one lookup that is not tenant-first: a request carries only the token, so the
    // organisation is unknown until the token has been found by its hash.
    uniqueIndex("api_token_hash_uq").on(t.tokenHash),
    index("api_token_organisation_created_idx").on(t.organisationId, t.createdAt),
  ],
);
