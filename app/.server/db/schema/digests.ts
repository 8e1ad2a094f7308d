// Loop performance digests. The table is declaratively partitioned by month on
// window_start (see drizzle/0001_*.sql; Drizzle cannot express partitioning, so the
// generated CREATE TABLE is edited there). The primary key serves per-loop time ranges.
// Idempotency on (loop, seq) across partitions is enforced by digest_seq, which is not
// partitioned: a unique key on a partitioned table must include the partition column.
import { doublePrecision, foreignKey, integer, pgTable, primaryKey, text, timestamp, uuid } from "drizzle-orm/pg-core";
import { DIGEST_FIELDS, type DigestFieldName } from "~/lib/health/digest-fields";
import { loop } from "./fleet";

/** The measured fields' columns, from the one table of digest fields (integers and doubles both read as numbers). */
function measuredColumns() {
  const column = (f: (typeof DIGEST_FIELDS)[number]) => (f.kind === "count" ? integer(f.column).notNull() : doublePrecision(f.column).notNull());
  return Object.fromEntries(DIGEST_FIELDS.map((f) => [f.name, column(f)])) as Record<DigestFieldName, ReturnType<typeof column>>;
}

export const digest = pgTable(
  "digest",
  {
    organisationId: text("organisation_id").notNull(),
    loopId: uuid("loop_id").notNull(),
    windowStart: timestamp("window_start", { withTimezone: true }).notNull(),
    seq: integer("seq").notNull(),
    windowEnd: timestamp("window_end", { withTimezone: true }).notNull(),
    receivedAt: timestamp("received_at", { withTimezone: true }).notNull().defaultNow(),
    ...measuredColumns(),
  },
  (t) => [
    primaryKey({ name: "digest_pk", columns: [t.organisationId, t.loopId, t.windowStart, t.seq] }),
    foreignKey({ name: "digest_loop_fk", columns: [t.organisationId, t.loopId], foreignColumns: [loop.organisationId, loop.id] }).onDelete("cascade"),
  ],
);

/**
 * One row per accepted (loop, seq): the claim that makes a retry a no-op. Written only in the
 * statement that writes its digest, whose foreign key already proves the loop. It has no
 * foreign key of its own on purpose: every check locks the loop row, and with many batches
 * posting to the same loops those shared locks cost PostgreSQL more than the claim itself
 * (the ingest bench measured about 20 µs per digest). A statement trigger on loop deletes a
 * deleted loop's claims instead (drizzle/0004_*.sql), as the cascade did.
 */
export const digestSeq = pgTable(
  "digest_seq",
  {
    organisationId: text("organisation_id").notNull(),
    loopId: uuid("loop_id").notNull(),
    seq: integer("seq").notNull(),
  },
  (t) => [
    primaryKey({ name: "digest_seq_pk", columns: [t.organisationId, t.loopId, t.seq] }),
  ],
);
