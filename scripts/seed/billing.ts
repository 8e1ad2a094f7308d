// The demo organisations' billing on the local Stripe: each gets a customer on a test clock set
// about four months back, a card that pays, the per-machine subscription, and the clock moved
// month by month to now, so the billing page shows months of paid invoices. Idempotent: an
// organisation whose customer already exists on the fake (found by its metadata) is only
// brought up to date, never subscribed twice.
import { eq } from "drizzle-orm";
import type Stripe from "stripe";
import { countActiveMachines, ensureBillingAccount, getOwners } from "~/.server/billing/account";
import { getMachinePrice } from "~/.server/billing/stripe";
import { applySubscriptionState } from "~/.server/billing/webhooks";
import type { Db } from "~/.server/db/client";
import { billingAccount, organisation } from "~/.server/db/schema";

const DAY = 24 * 3600;

async function findCustomer(stripe: Stripe, email: string | undefined, organisationId: string): Promise<Stripe.Customer | null> {
  for await (const customer of stripe.customers.list(email ? { email, limit: 100 } : { limit: 100 })) {
    if (customer.metadata?.organisation_id === organisationId) return customer;
  }
  return null;
}

async function latestSubscription(stripe: Stripe, customerId: string): Promise<Stripe.Subscription | null> {
  const list = await stripe.subscriptions.list({ customer: customerId, status: "all", limit: 10 });
  return list.data.find((s) => s.status !== "canceled") ?? list.data[0] ?? null;
}

async function clockTime(stripe: Stripe, customer: Stripe.Customer): Promise<number> {
  const clockId = typeof customer.test_clock === "string" ? customer.test_clock : customer.test_clock?.id;
  if (!clockId) return Math.floor(Date.now() / 1000);
  return (await stripe.testHelpers.testClocks.retrieve(clockId)).frozen_time;
}

export async function seedDemoBilling(db: Db, stripe: Stripe, slugs: string[]): Promise<string[]> {
  const done: string[] = [];
  for (const slug of slugs) {
    const [org] = await db.select({ id: organisation.id, name: organisation.name }).from(organisation).where(eq(organisation.slug, slug));
    if (!org) continue;
    await ensureBillingAccount(db, { organisationId: org.id });
    const [owner] = await getOwners(db, { organisationId: org.id });
    let customer = await findCustomer(stripe, owner?.email, org.id);
    // A customer of an earlier start keeps whatever happened to it since (even a cancellation).
    let subscription = customer ? await latestSubscription(stripe, customer.id) : null;
    if (!customer) {
      const now = Math.floor(Date.now() / 1000);
      const start = now - 125 * DAY;
      const clock = await stripe.testHelpers.testClocks.create({ frozen_time: start, name: `Demo: ${org.name}` });
      customer = await stripe.customers.create({
        name: org.name,
        ...(owner ? { email: owner.email } : {}),
        test_clock: clock.id,
        metadata: { organisation_id: org.id, organisation_slug: slug },
      });
      const card = await stripe.paymentMethods.attach("pm_card_visa", { customer: customer.id });
      await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: card.id } });
      const price = await getMachinePrice(stripe);
      const quantity = Math.max(1, await countActiveMachines(db, { organisationId: org.id }));
      subscription = await stripe.subscriptions.create({
        customer: customer.id,
        items: [{ price: price.id, quantity }],
        metadata: { organisation_id: org.id },
      });
      // Month by month (each step renews once), then to now.
      for (let at = start + 30 * DAY; at < now; at += 30 * DAY) await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: at });
      await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: now });
      subscription = await stripe.subscriptions.retrieve(subscription.id);
    }
    // The app is not running yet, so the webhooks of all this arrive later (and are then older
    // than this state): write the subscription's state now.
    await db.update(billingAccount).set({ stripeCustomerId: customer.id }).where(eq(billingAccount.organisationId, org.id));
    if (subscription) await applySubscriptionState(db, { organisationId: org.id, subscription, at: await clockTime(stripe, customer) });
    done.push(slug);
  }
  return done;
}
