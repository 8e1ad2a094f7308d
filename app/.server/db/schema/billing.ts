// Billing per organisation (app/.server/billing/): the Stripe customer and subscription as the
// webhooks last told us, the machines billed, and the webhook events already applied.
import { bigint, index, integer, jsonb, pgTable, text, timestamp, uniqueIndex } from "drizzle-orm/pg-core";
import { organisation } from "./auth";

export const billingAccount = pgTable(
  "billing_account",
  {
    organisationId: text("organisation_id")
      .primaryKey()
      .references(() => organisation.id, { onDelete: "cascade" }),
    stripeCustomerId: text("stripe_customer_id"),
    stripeSubscriptionId: text("stripe_subscription_id"),
    /** `trial` until a subscription exists, then `per_machine`. */
    plan: text("plan").notNull().default("trial"),
    /** trialing | active | past_due | unpaid | canceled */
    status: text("status").notNull().default("trialing"),
    trialEndsAt: timestamp("trial_ends_at", { withTimezone: true }).notNull(),
    currentPeriodEnd: timestamp("current_period_end", { withTimezone: true }),
    /** The subscription's quantity as Stripe last reported it. */
    machinesBilled: integer("machines_billed").notNull().default(0),
    /**
     * Order of the applied subscription state: the subscription's own `created` (a newer
     * subscription replaces an older one), then the event's `created` (Stripe's time of the
     * change, on the customer's test clock). An event older than both is not applied.
     */
    subscriptionCreated: bigint("subscription_created", { mode: "number" }),
    stateAt: bigint("state_at", { mode: "number" }),
    /** Bumped on every machine registration or decommissioning; the quantity sync's idempotency key carries it. */
    quantityChangeSeq: integer("quantity_change_seq").notNull().default(0),
    quantitySyncedSeq: integer("quantity_synced_seq").notNull().default(0),
    lastPaymentFailedAt: timestamp("last_payment_failed_at", { withTimezone: true }),
    createdAt: timestamp("created_at", { withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp("updated_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    // Webhooks name only the customer: the one lookup that is not tenant-first.
    uniqueIndex("billing_account_customer_uq").on(t.stripeCustomerId),
  ],
);

/**
 * Stripe events as received (verified) by POST /api/webhooks/stripe. Not tenant-first: an
 * event is stored before we know its organisation; the job fills `organisation_id` in.
 */
export const stripeEvent = pgTable(
  "stripe_event",
  {
    id: text("id").primaryKey(),
    type: text("type").notNull(),
    /** The event's own `created` (seconds). */
    created: bigint("created", { mode: "number" }).notNull(),
    payload: jsonb("payload").notNull(),
    organisationId: text("organisation_id").references(() => organisation.id, { onDelete: "cascade" }),
    receivedAt: timestamp("received_at", { withTimezone: true }).notNull().defaultNow(),
    appliedAt: timestamp("applied_at", { withTimezone: true }),
    /** What the job did: applied, stale (older than the state), ignored (not ours or not used). */
    outcome: text("outcome"),
  },
  (t) => [index("stripe_event_organisation_idx").on(t.organisationId, t.created)],
);
