// POST /api/webhooks/stripe: signatures, events applied once, and order by Stripe's own times.
// Events here are made from real objects of the local Stripe (through the SDK), re-addressed to
// a customer id only the test organisation knows, and signed as Stripe signs them.
import { randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import type Stripe from "stripe";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { billingAccount, stripeEvent } from "~/.server/db/schema";
import { ensureBillingAccount } from "~/.server/billing/account";
import { createTeam } from "../factories";
import { closeDb, db } from "../support/db";
import { inbox } from "../support/http";
import { customerOnClock, deliver, eventually, machinePrice, stripeAt } from "../support/stripe";

const stripe = stripeAt();
let subscriptionTemplate: Stripe.Subscription;
let invoiceTemplate: Stripe.Invoice;

beforeAll(async () => {
  // A customer no organisation knows: the fake's own deliveries of these objects are ignored.
  const { customer } = await customerOnClock(stripe, "pm_card_visa");
  const price = await machinePrice(stripe);
  subscriptionTemplate = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 3 }] });
  invoiceTemplate = await stripe.invoices.retrieve(String(subscriptionTemplate.latest_invoice));
});
afterAll(closeDb);

const eventId = () => `evt_test_${randomUUID().replaceAll("-", "")}`;
const request = { id: null, idempotency_key: null };

function subscriptionEvent(type: "customer.subscription.created" | "customer.subscription.updated" | "customer.subscription.deleted", subscription: Stripe.Subscription, created: number): Stripe.Event {
  const base = { id: eventId(), object: "event" as const, api_version: "2026-10-28", created, livemode: false, pending_webhooks: 1, request, data: { object: subscription } };
  switch (type) {
    case "customer.subscription.created":
      return { ...base, type } satisfies Stripe.CustomerSubscriptionCreatedEvent;
    case "customer.subscription.updated":
      return { ...base, type } satisfies Stripe.CustomerSubscriptionUpdatedEvent;
    case "customer.subscription.deleted":
      return { ...base, type } satisfies Stripe.CustomerSubscriptionDeletedEvent;
  }
}

function paymentFailedEvent(invoice: Stripe.Invoice, created: number): Stripe.InvoicePaymentFailedEvent {
  return { id: eventId(), object: "event", api_version: "2026-10-28", created, livemode: false, pending_webhooks: 1, request, data: { object: invoice }, type: "invoice.payment_failed" };
}

/** The template subscription for `customer`, with a status and a quantity. */
function subscriptionFor(customer: string, status: Stripe.Subscription.Status, quantity: number, id = subscriptionTemplate.id): Stripe.Subscription {
  const item = subscriptionTemplate.items.data[0]!;
  return { ...subscriptionTemplate, id, customer, status, metadata: {}, items: { ...subscriptionTemplate.items, data: [{ ...item, quantity }] } };
}

/** A test organisation whose billing row names a customer made up for it. */
async function linkedTeam() {
  const team = await createTeam(db(), ["owner"]);
  const customer = `cus_linked${randomUUID().replaceAll("-", "").slice(0, 14)}`;
  await ensureBillingAccount(db(), { organisationId: team.organisation.id });
  await db().update(billingAccount).set({ stripeCustomerId: customer }).where(eq(billingAccount.organisationId, team.organisation.id));
  return { team, customer };
}

const account = async (organisationId: string) => (await db().select().from(billingAccount).where(eq(billingAccount.organisationId, organisationId)))[0]!;
const stored = async (id: string) => (await db().select().from(stripeEvent).where(eq(stripeEvent.id, id)))[0];
const applied = (id: string) => eventually(`event ${id} applied`, async () => {
  const row = await stored(id);
  return row?.appliedAt ? row : null;
});

describe("signature", () => {
  it("answers 400 to a bad, missing or mismatched signature and stores and changes nothing", async () => {
    const { team, customer } = await linkedTeam();
    const before = await account(team.organisation.id);
    const event = subscriptionEvent("customer.subscription.updated", subscriptionFor(customer, "past_due", 9), Math.floor(Date.now() / 1000));

    const wrongSecret = await deliver(event, { secret: "whsec_someone_else" });
    expect(wrongSecret.status).toBe(400);
    expect((await wrongSecret.json()).error.code).toBe("invalid_signature");
    const missing = await deliver(event, { header: null });
    expect(missing.status).toBe(400);
    expect((await missing.json()).error.code).toBe("invalid_signature");
    // A valid signature of another body.
    const other = stripe.webhooks.generateTestHeaderString({ payload: JSON.stringify({ ...event, id: eventId() }), secret: process.env.STRIPE_WEBHOOK_SECRET ?? "whsec_test_secret_not_for_production" });
    expect((await deliver(event, { header: other })).status).toBe(400);
    expect((await deliver(event, { header: "t=1,v1=00" })).status).toBe(400);

    expect(await stored(event.id)).toBeUndefined();
    expect(await account(team.organisation.id)).toEqual(before);
  }, 120_000);

  it("takes POST only", async () => {
    const { APP_URL } = await import("../support/http");
    expect((await fetch(`${APP_URL}/api/webhooks/stripe`)).status).toBe(405);
  }, 120_000);
});

describe("each event once", () => {
  it("applies an event delivered twice once: one e-mail to the owner for one failed payment", async () => {
    const { team, customer } = await linkedTeam();
    const owner = team.people[0]!;
    const event = paymentFailedEvent({ ...invoiceTemplate, customer, amount_due: 8700 }, Math.floor(Date.now() / 1000));
    const first = await deliver(event);
    expect(first.status).toBe(200);
    expect(await first.json()).toEqual({ received: true, duplicate: false });
    const second = await deliver(event);
    expect(second.status).toBe(200);
    expect(await second.json()).toEqual({ received: true, duplicate: true });

    const row = await applied(event.id);
    expect(row).toMatchObject({ outcome: "applied", organisationId: team.organisation.id, type: "invoice.payment_failed" });
    const mails = await eventually("the e-mail", async () => {
      const found = (await inbox(owner.email)).filter((m) => m.subject.includes("failed"));
      return found.length ? found : null;
    });
    // A replay after it was applied is answered and ignored too.
    expect((await (await deliver(event)).json()).duplicate).toBe(true);
    expect((await stored(event.id))!.appliedAt).toEqual(row.appliedAt);
    expect((await inbox(owner.email)).filter((m) => m.subject.includes("failed"))).toHaveLength(mails.length);
    expect(mails).toHaveLength(1);
    expect(mails[0]!.text).toContain("€87.00");
    expect(mails[0]!.text).toContain(`/o/${team.organisation.slug}/billing`);
    expect((await account(team.organisation.id)).lastPaymentFailedAt).not.toBeNull();
  }, 120_000);
});

describe("order by Stripe's times, not arrival", () => {
  it("ends in the state of `updated` when it arrives before `created`", async () => {
    const { team, customer } = await linkedTeam();
    const t = Math.floor(Date.now() / 1000);
    const created = subscriptionEvent("customer.subscription.created", subscriptionFor(customer, "active", 3), t);
    const updated = subscriptionEvent("customer.subscription.updated", subscriptionFor(customer, "past_due", 7), t + 60);

    expect((await deliver(updated)).status).toBe(200);
    expect((await applied(updated.id)).outcome).toBe("applied");
    expect((await deliver(created)).status).toBe(200);
    expect((await applied(created.id)).outcome).toBe("stale");

    expect(await account(team.organisation.id)).toMatchObject({ plan: "per_machine", status: "past_due", machinesBilled: 7, stripeSubscriptionId: subscriptionTemplate.id, stateAt: t + 60 });
  }, 120_000);

  it("keeps a cancellation when an older update arrives after it, and lets a newer subscription replace it", async () => {
    const { team, customer } = await linkedTeam();
    const t = Math.floor(Date.now() / 1000);
    const deleted = subscriptionEvent("customer.subscription.deleted", subscriptionFor(customer, "canceled", 3), t + 120);
    const olderUpdate = subscriptionEvent("customer.subscription.updated", subscriptionFor(customer, "active", 4), t + 30);
    await deliver(deleted);
    await applied(deleted.id);
    await deliver(olderUpdate);
    expect((await applied(olderUpdate.id)).outcome).toBe("stale");
    expect(await account(team.organisation.id)).toMatchObject({ status: "canceled", machinesBilled: 3 });

    // A new subscription (created later) wins even with an event time before the cancellation's.
    const replacement: Stripe.Subscription = { ...subscriptionFor(customer, "active", 5, "sub_replacement" + randomUUID().slice(0, 8)), created: subscriptionTemplate.created + 10 };
    const fresh = subscriptionEvent("customer.subscription.created", replacement, t + 100);
    await deliver(fresh);
    expect((await applied(fresh.id)).outcome).toBe("applied");
    expect(await account(team.organisation.id)).toMatchObject({ status: "active", machinesBilled: 5, stripeSubscriptionId: replacement.id });
  }, 120_000);

  it("ignores events of customers no organisation has", async () => {
    const event = subscriptionEvent("customer.subscription.updated", subscriptionFor("cus_nobodyknows", "active", 2), Math.floor(Date.now() / 1000));
    await deliver(event);
    expect(await applied(event.id)).toMatchObject({ outcome: "ignored", organisationId: null });
  }, 120_000);
});
