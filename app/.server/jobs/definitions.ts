// Background jobs (pg-boss): typed definitions in one list. Every payload is validated when
// the job runs; handlers are idempotent (running one twice does no harm).
import { sql } from "drizzle-orm";
import { z } from "zod";
import type { Db } from "~/.server/db/client";
import { refreshMachineHealth } from "~/.server/fleet/health";
import { withdrawRetiredSigningKeys } from "~/.server/device-auth/signing-keys";
import { advanceRelease, listActiveReleases } from "~/.server/releases/releases";
import { SYNC_QUANTITY_JOB, SYNC_QUANTITY_QUEUE, syncQuantity } from "~/.server/billing/quantity";
import { getStripe } from "~/.server/billing/stripe";
import { APPLY_EVENT_JOB, applyStripeEvent } from "~/.server/billing/webhooks";

export type JobDefinition<S extends z.ZodType> = {
  name: string;
  schema: S;
  /** Cron (UTC) for recurring jobs. */
  cron?: string;
  /** pg-boss queue options (e.g. `stately` to coalesce jobs by singleton key). */
  queue?: { policy?: "standard" | "stately" };
  handler: (db: Db, payload: z.infer<S>) => Promise<void>;
};

function defineJob<S extends z.ZodType>(job: JobDefinition<S>): JobDefinition<S> {
  return job;
}

/** Digest partitions: this month and the next three exist at all times. */
export const ensureDigestPartitions = defineJob({
  name: "fleet.ensure-digest-partitions",
  schema: z.object({}).passthrough(),
  cron: "17 3 * * *",
  handler: async (db) => {
    await db.execute(sql`select flyball_ensure_digest_partitions(now()::date, 4)`);
  },
});

/** Seen JWT ids are only needed until their token would have expired. */
export const purgeDeviceJtis = defineJob({
  name: "device.purge-jtis",
  schema: z.object({}).passthrough(),
  cron: "*/10 * * * *",
  handler: async (db) => {
    await db.execute(sql`delete from device_jti where expires_at < now()`);
  },
});

/** Loop health of every machine that posted in the last 10 minutes (ingest also refreshes on the fly). */
export const refreshFleetHealth = defineJob({
  name: "fleet.refresh-health",
  schema: z.object({}).passthrough(),
  cron: "*/5 * * * *",
  handler: async (db) => {
    const rows = await db.execute<{ organisation_id: string; id: string }>(sql`select organisation_id, id from machine where status = 'active' and last_seen_at > now() - interval '10 minutes'`);
    for (const row of rows.rows) await refreshMachineHealth(db, { organisationId: row.organisation_id, machineId: row.id });
  },
});

/** Signing keys retired by a rotation leave the JWKS once their overlap has passed. */
export const withdrawSigningKeys = defineJob({
  name: "device.withdraw-signing-keys",
  schema: z.object({}).passthrough(),
  cron: "41 * * * *",
  handler: async (db) => {
    await withdrawRetiredSigningKeys(db);
  },
});

/**
 * Releases in their pilot or widening: evaluate the guard (hold at once when it says so),
 * widen after the guard window, complete when every target answered. Each minute; a release
 * is locked while it is advanced, so overlapping runs do no harm.
 */
export const advanceReleases = defineJob({
  name: "release.advance",
  schema: z.object({}).passthrough(),
  cron: "* * * * *",
  handler: async (db) => {
    for (const r of await listActiveReleases(db)) {
      try {
        await advanceRelease(db, { organisationId: r.organisationId, releaseId: r.id });
      } catch (error) {
        console.error(`[release.advance] ${r.id}:`, (error as Error).message);
      }
    }
  },
});

/** A verified Stripe event stored by POST /api/webhooks/stripe, applied once (app/.server/billing/webhooks.ts). */
export const applyStripeEventJob = defineJob({
  name: APPLY_EVENT_JOB,
  schema: z.object({ eventId: z.string().min(1) }),
  handler: async (db, { eventId }) => {
    await applyStripeEvent(db, { eventId });
  },
});

/** The subscription's quantity follows the active machines; coalesced per organisation. */
export const syncBillingQuantity = defineJob({
  name: SYNC_QUANTITY_JOB,
  schema: z.object({ organisationId: z.string().min(1) }),
  queue: SYNC_QUANTITY_QUEUE,
  handler: async (db, { organisationId }) => {
    await syncQuantity(db, getStripe(), { organisationId });
  },
});

export const JOBS = [ensureDigestPartitions, purgeDeviceJtis, refreshFleetHealth, applyStripeEventJob, syncBillingQuantity, withdrawSigningKeys, advanceReleases] as const;
