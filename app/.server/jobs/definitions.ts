// Background jobs (pg-boss): typed definitions in one list. Every payload is validated when
// the job runs; handlers are idempotent (running one twice does no harm).
import { sql } from "drizzle-orm";
import { z } from "zod";
import type { Db } from "~/.server/db/client";
import { withdrawRetiredSigningKeys } from "~/.server/device-auth/signing-keys";
import { advanceRelease, listActiveReleases } from "~/.server/releases/releases";
import { SYNC_QUANTITY_JOB, SYNC_QUANTITY_QUEUE, syncQuantity } from "~/.server/billing/quantity";
import { getStripe } from "~/.server/billing/stripe";
import { APPLY_EVENT_JOB, APPLY_EVENT_QUEUE, applyStripeEvent } from "~/.server/billing/webhooks";
import { evaluateMachineHealth } from "~/.server/health/evaluate";
import { deliverAlerts } from "~/.server/health/alerts";
import { DELIVER_ALERTS_JOB, EVALUATE_MACHINE_JOB, sendDeliverAlerts } from "~/.server/health/queue";

export type JobDefinition<S extends z.ZodType> = {
  name: string;
  schema: S;
  /** Cron (UTC) for recurring jobs. */
  cron?: string;
  /** pg-boss queue policy; `stately` keeps one waiting job per singleton key (debounce). */
  policy?: "standard" | "stately";
  /** pg-boss retries of a failed job (its defaults otherwise). */
  retry?: { retryLimit?: number; retryDelay?: number; retryBackoff?: boolean };
  /** How the worker fetches (pg-boss polls every 2 s for one job unless told otherwise). */
  work?: { batchSize?: number; pollingIntervalSeconds?: number };
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

/** What an evaluation does when findings opened or escalated: queue the alert job (tests replace it). */
export const healthJobHooks = { alertsPending: (organisationId: string) => sendDeliverAlerts(organisationId) };

/** Evaluate a machine and, when findings opened or escalated, queue the alert job. */
async function evaluateAndAlert(db: Db, organisationId: string, machineId: string) {
  const result = await evaluateMachineHealth(db, { organisationId, machineId });
  if (result.alertsPending) await healthJobHooks.alertsPending(organisationId);
}

/**
 * Loop health of one machine after ingest (queued by ~/.server/health/queue, debounced per
 * machine): band and score, figures, findings and daily snapshots (~/.server/health/evaluate).
 */
export const evaluateMachine = defineJob({
  name: EVALUATE_MACHINE_JOB,
  schema: z.object({ organisationId: z.string().min(1), machineId: z.string().uuid() }),
  policy: "stately",
  handler: (db, { organisationId, machineId }) => evaluateAndAlert(db, organisationId, machineId),
});

/** Loop health of every machine that posted in the last 10 minutes (a safety net beside the per-machine job). */
export const refreshFleetHealth = defineJob({
  name: "fleet.refresh-health",
  schema: z.object({}).passthrough(),
  cron: "*/5 * * * *",
  handler: async (db) => {
    const rows = await db.execute<{ organisation_id: string; id: string }>(sql`select organisation_id, id from machine where status = 'active' and last_seen_at > now() - interval '10 minutes'`);
    for (const row of rows.rows) await evaluateAndAlert(db, row.organisation_id, row.id);
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
  // Events come in bursts (a checkout raises half a dozen): fetch many, often, apply in order.
  work: { batchSize: 20, pollingIntervalSeconds: 0.5 },
  retry: APPLY_EVENT_QUEUE,
  handler: async (db, { eventId }) => {
    await applyStripeEvent(db, { eventId });
  },
});

/** The subscription's quantity follows the active machines; coalesced per organisation. */
export const syncBillingQuantity = defineJob({
  name: SYNC_QUANTITY_JOB,
  schema: z.object({ organisationId: z.string().min(1) }),
  policy: SYNC_QUANTITY_QUEUE.policy,
  work: { pollingIntervalSeconds: 0.5 },
  handler: async (db, { organisationId }) => {
    await syncQuantity(db, getStripe(), { organisationId });
  },
});


/**
 * Findings that need the clock rather than a digest: loops gone silent without a silent finding
 * yet, and open findings counting down to their auto-resolve. Each such machine is evaluated.
 */
export const sweepFindings = defineJob({
  name: "health.sweep",
  schema: z.object({}).passthrough(),
  cron: "* * * * *",
  handler: async (db) => {
    const rows = await db.execute<{ organisation_id: string; id: string }>(sql`
      select distinct m.organisation_id, m.id
      from machine m
      join loop l on l.organisation_id = m.organisation_id and l.machine_id = m.id
      join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
      where m.status = 'active' and l.last_digest_at is not null and (
        (l.last_digest_at < now() - make_interval(secs => coalesce(3 * (t.thresholds->>'expectedDigestIntervalS')::float8, (t.thresholds->>'silentAfter')::float8, 900))
          and not exists (select 1 from finding f where f.organisation_id = l.organisation_id and f.loop_id = l.id and f.kind = 'silent' and f.state in ('open', 'acknowledged')))
        or exists (select 1 from finding f where f.organisation_id = l.organisation_id and f.loop_id = l.id and f.state in ('open', 'acknowledged') and f.clear_since is not null)
      )
      limit 1000`);
    for (const row of rows.rows) await evaluateAndAlert(db, row.organisation_id, row.id);
  },
});

/**
 * Alert e-mails for an organisation's new and escalated findings (~/.server/health/alerts.ts).
 * Queued 30 s after a finding opens (a burst gathers into one summary), retried with backoff;
 * a retry sends only what was not sent yet.
 */
export const deliverAlertsJob = defineJob({
  name: DELIVER_ALERTS_JOB,
  schema: z.object({ organisationId: z.string().min(1) }),
  policy: "stately",
  handler: async (db, { organisationId }) => {
    await deliverAlerts(db, { organisationId });
  },
});

export const JOBS = [ensureDigestPartitions, purgeDeviceJtis, refreshFleetHealth, evaluateMachine, sweepFindings, deliverAlertsJob, applyStripeEventJob, syncBillingQuantity, withdrawSigningKeys, advanceReleases] as const;
