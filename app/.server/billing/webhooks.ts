// Stripe's webhooks: POST /api/webhooks/stripe verifies the signature on the raw body, stores
// the event once (by its id) and hands it to a job; the job applies it to billing_account.
//
// Order: Stripe does not promise delivery order. A subscription's state is applied only when it
// is at least as new as the stored one, by (subscription.created, event.created): a newer
// subscription replaces an older one, and within one subscription the later change wins. Both
// times are Stripe's own (on the customer's test clock), never our arrival time.
import { and, eq, isNull, or, sql } from "drizzle-orm";
import Stripe from "stripe";
import type { Db } from "~/.server/db/client";
import { billingAccount, organisation, stripeEvent } from "~/.server/db/schema";
import { sendEmail } from "~/.server/email/send-email";
import { paymentFailedEmail } from "~/.server/email/templates";
import { env } from "~/.server/env";
import { enqueue } from "~/.server/jobs/queue";
import type { BillingStatus } from "~/lib/billing/rules";
import { DomainError } from "~/lib/errors";
import { ensureBillingAccount, getOwners } from "./account";
import { getStripe } from "./stripe";

export const APPLY_EVENT_JOB = "billing.apply-stripe-event";
/** A failure (say the e-mail service is down) is tried again for about an hour. */
export const APPLY_EVENT_QUEUE = { retryLimit: 10, retryDelay: 5, retryBackoff: true } as const;

/** Verify and store one delivery; answers whether it was new. Throws DomainError 400 on a bad signature. */
export async function receiveStripeWebhook(db: Db, { body, signature }: { body: string; signature: string | null }): Promise<{ duplicate: boolean }> {
  const secret = env().STRIPE_WEBHOOK_SECRET;
  if (!secret) throw new DomainError("webhooks_unconfigured", "STRIPE_WEBHOOK_SECRET is not set on this server.", { status: 503 });
  if (!signature) throw new DomainError("invalid_signature", "The Stripe-Signature header is missing.", { status: 400 });
  let event: Stripe.Event;
  try {
    event = getStripe().webhooks.constructEvent(body, signature, secret);
  } catch {
    throw new DomainError("invalid_signature", "The Stripe-Signature header does not match the body.", { status: 400 });
  }
  const inserted = await db
    .insert(stripeEvent)
    .values({ id: event.id, type: event.type, created: event.created, payload: event })
    .onConflictDoNothing()
    .returning({ id: stripeEvent.id });
  if (inserted.length === 0) {
    // A replay. Already applied: nothing to do. Stored but not applied (say the enqueue was
    // lost): enqueue again; the job applies an event at most once.
    const [stored] = await db.select({ appliedAt: stripeEvent.appliedAt }).from(stripeEvent).where(eq(stripeEvent.id, event.id));
    if (stored && !stored.appliedAt) await enqueue(APPLY_EVENT_JOB, { eventId: event.id }, { queue: APPLY_EVENT_QUEUE });
    return { duplicate: true };
  }
  await enqueue(APPLY_EVENT_JOB, { eventId: event.id }, { queue: APPLY_EVENT_QUEUE });
  return { duplicate: false };
}

const STATUS_OF: Partial<Record<Stripe.Subscription.Status, BillingStatus>> = {
  active: "active",
  trialing: "trialing",
  past_due: "past_due",
  unpaid: "unpaid",
  canceled: "canceled",
  paused: "unpaid",
};

const customerIdOf = (customer: string | Stripe.Customer | Stripe.DeletedCustomer | null): string | null =>
  customer === null ? null : typeof customer === "string" ? customer : customer.id;

/** The organisation an object belongs to: by its customer, else by the metadata we put on it. */
async function organisationFor(db: Db, customerId: string | null, metadataOrganisationId: string | null | undefined): Promise<string | null> {
  if (customerId) {
    const [row] = await db.select({ id: billingAccount.organisationId }).from(billingAccount).where(eq(billingAccount.stripeCustomerId, customerId));
    if (row) return row.id;
  }
  if (metadataOrganisationId) {
    const [row] = await db.select({ id: organisation.id }).from(organisation).where(eq(organisation.id, metadataOrganisationId));
    if (row) return row.id;
  }
  return null;
}

export type ApplyOutcome = "applied" | "stale" | "ignored";

/**
 * Write a subscription's state to the organisation's row when it is at least as new as what is
 * there. Used by the webhook job and by the demo seed (which reads the subscription itself).
 */
export async function applySubscriptionState(db: Db, { organisationId, subscription, at }: { organisationId: string; subscription: Stripe.Subscription; at: number }): Promise<ApplyOutcome> {
  const status = STATUS_OF[subscription.status];
  // incomplete / incomplete_expired: a first payment that has not gone through changes nothing.
  if (!status) return "ignored";
  await ensureBillingAccount(db, { organisationId });
  const item = subscription.items.data[0];
  const customerId = customerIdOf(subscription.customer);
  const updated = await db
    .update(billingAccount)
    .set({
      plan: "per_machine",
      status,
      stripeSubscriptionId: subscription.id,
      stripeCustomerId: sql`coalesce(${billingAccount.stripeCustomerId}, ${customerId})`,
      currentPeriodEnd: item ? new Date(item.current_period_end * 1000) : null,
      machinesBilled: item?.quantity ?? 0,
      subscriptionCreated: subscription.created,
      stateAt: at,
      updatedAt: new Date(),
    })
    .where(
      and(
        eq(billingAccount.organisationId, organisationId),
        or(
          isNull(billingAccount.subscriptionCreated),
          sql`(${billingAccount.subscriptionCreated}, coalesce(${billingAccount.stateAt}, 0)) <= (${subscription.created}::bigint, ${at}::bigint)`,
        ),
      ),
    )
    .returning({ id: billingAccount.organisationId });
  return updated.length ? "applied" : "stale";
}

function formatAmount(cents: number, currency: string) {
  return new Intl.NumberFormat("en-GB", { style: "currency", currency: currency.toUpperCase() }).format(cents / 100);
}

async function emailOwnersPaymentFailed(db: Db, organisationId: string, invoice: Stripe.Invoice) {
  const [org] = await db.select({ name: organisation.name, slug: organisation.slug }).from(organisation).where(eq(organisation.id, organisationId));
  if (!org) return;
  const url = `${env().BETTER_AUTH_URL.replace(/\/$/, "")}/o/${org.slug}/billing`;
  const message = paymentFailedEmail(org.name, formatAmount(invoice.amount_due, invoice.currency), url);
  for (const owner of await getOwners(db, { organisationId })) await sendEmail({ to: owner.email, ...message });
}

/** The job: apply one stored event, once. */
export async function applyStripeEvent(db: Db, { eventId }: { eventId: string }): Promise<ApplyOutcome | "already"> {
  return db.transaction(async (tx) => {
    const [stored] = await tx.select().from(stripeEvent).where(eq(stripeEvent.id, eventId)).for("update");
    if (!stored || stored.appliedAt) return "already";
    const event = stored.payload as Stripe.Event;
    let organisationId: string | null = null;
    let outcome: ApplyOutcome = "ignored";
    switch (event.type) {
      case "customer.subscription.created":
      case "customer.subscription.updated":
      case "customer.subscription.deleted": {
        const subscription = event.data.object;
        organisationId = await organisationFor(tx, customerIdOf(subscription.customer), subscription.metadata?.organisation_id);
        if (organisationId) outcome = await applySubscriptionState(tx, { organisationId, subscription, at: event.created });
        break;
      }
      case "checkout.session.completed": {
        const session = event.data.object;
        const customerId = customerIdOf(session.customer);
        organisationId = await organisationFor(tx, customerId, session.client_reference_id ?? session.metadata?.organisation_id);
        if (organisationId && customerId) {
          await ensureBillingAccount(tx, { organisationId });
          await tx.update(billingAccount).set({ stripeCustomerId: customerId }).where(and(eq(billingAccount.organisationId, organisationId), isNull(billingAccount.stripeCustomerId)));
          outcome = "applied";
        }
        break;
      }
      case "invoice.payment_failed": {
        const invoice = event.data.object;
        organisationId = await organisationFor(tx, customerIdOf(invoice.customer), null);
        if (organisationId) {
          await tx.update(billingAccount).set({ lastPaymentFailedAt: new Date(event.created * 1000) }).where(eq(billingAccount.organisationId, organisationId));
          // A failed send throws: the transaction rolls back and the job is tried again.
          await emailOwnersPaymentFailed(tx, organisationId, invoice);
          outcome = "applied";
        }
        break;
      }
      default:
        break;
    }
    await tx.update(stripeEvent).set({ appliedAt: new Date(), outcome, organisationId }).where(eq(stripeEvent.id, eventId));
    return outcome;
  });
}
