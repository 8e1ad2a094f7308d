// The subscription's quantity follows the count of active machines. Each registration or
// decommissioning bumps quantity_change_seq and asks for a sync; the sync job is coalesced per
// organisation (a stately queue with the organisation as singleton key) and sends the count
// with an idempotency key naming the change, so a retried job never applies a change twice.
import { and, eq, lt, sql } from "drizzle-orm";
import StripeSdk from "stripe";
import type Stripe from "stripe";
import type { Db } from "~/.server/db/client";
import { billingAccount } from "~/.server/db/schema";
import { enqueue } from "~/.server/jobs/queue";
import { countActiveMachines, ensureBillingAccount } from "./account";

export const SYNC_QUANTITY_JOB = "billing.sync-quantity";
export const SYNC_QUANTITY_QUEUE = { policy: "stately" } as const;

/** Call after a machine was registered or decommissioned (after the commit). */
export async function requestQuantitySync(db: Db, { organisationId }: { organisationId: string }): Promise<void> {
  await ensureBillingAccount(db, { organisationId });
  await db
    .update(billingAccount)
    .set({ quantityChangeSeq: sql`${billingAccount.quantityChangeSeq} + 1` })
    .where(eq(billingAccount.organisationId, organisationId));
  await enqueue(SYNC_QUANTITY_JOB, { organisationId }, { queue: SYNC_QUANTITY_QUEUE, singletonKey: organisationId });
}

/** The job: set the subscription's quantity to the active machines (at least one). */
export async function syncQuantity(db: Db, stripe: Stripe, { organisationId }: { organisationId: string }): Promise<{ quantity: number | null }> {
  const account = await ensureBillingAccount(db, { organisationId });
  const seq = account.quantityChangeSeq;
  const markSynced = () =>
    db
      .update(billingAccount)
      .set({ quantitySyncedSeq: seq })
      .where(and(eq(billingAccount.organisationId, organisationId), lt(billingAccount.quantitySyncedSeq, seq)));
  if (account.plan !== "per_machine" || !account.stripeSubscriptionId || account.status === "canceled") {
    await markSynced();
    return { quantity: null };
  }
  const quantity = Math.max(1, await countActiveMachines(db, { organisationId }));
  let subscription: Stripe.Subscription;
  try {
    subscription = await stripe.subscriptions.retrieve(account.stripeSubscriptionId);
  } catch (error) {
    // A subscription Stripe does not know (deleted there, or another account's): nothing to bill.
    if (error instanceof StripeSdk.errors.StripeInvalidRequestError && error.code === "resource_missing") {
      await markSynced();
      return { quantity: null };
    }
    throw error;
  }
  const item = subscription.items.data[0];
  if (!item || subscription.status === "canceled") {
    await markSynced();
    return { quantity: null };
  }
  let billed = item.quantity ?? 0;
  if (billed !== quantity) {
    const updated = await stripe.subscriptions.update(
      subscription.id,
      { items: [{ id: item.id, quantity }], proration_behavior: "create_prorations" },
      { idempotencyKey: `flyball-quantity-${organisationId}-${subscription.id}-${seq}-${quantity}` },
    );
    billed = updated.items.data[0]?.quantity ?? quantity;
  }
  await db.update(billingAccount).set({ machinesBilled: billed, updatedAt: new Date() }).where(eq(billingAccount.organisationId, organisationId));
  await markSynced();
  return { quantity: billed };
}
