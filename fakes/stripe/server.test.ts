// The local Stripe driven only through the real `stripe` SDK (and, for its pages, a browser's
// form posts), its answers typed with the SDK's own types.
import { mkdtempSync, rmSync } from "node:fs";
import { createServer, type Server } from "node:http";
import type { AddressInfo } from "node:net";
import { tmpdir } from "node:os";
import path from "node:path";
import Stripe from "stripe";
import { afterAll, afterEach, beforeEach, describe, expect, it } from "vitest";
import { SEEDED_LOOKUP_KEY } from "./billing";
import { createStripeFake, type StripeFake, type StripeFakeOptions } from "./server";

const SECRET = "whsec_test_secret_for_the_fake";
const DAY = 86400;
const dirs: string[] = [];
const running: StripeFake[] = [];

async function startFake(overrides: Partial<StripeFakeOptions> = {}, dataDir?: string) {
  const dir = dataDir ?? mkdtempSync(path.join(tmpdir(), "stripe-fake-"));
  if (!dataDir) dirs.push(dir);
  const fake = createStripeFake({ dataDir: dir, webhookSecret: SECRET, retryBaseMs: 20, ...overrides });
  const url = await fake.listen(0);
  running.push(fake);
  return { fake, url, dir, stripe: client(url) };
}

function client(url: string, key = "sk_test_flyball") {
  const { hostname, port } = new URL(url);
  return new Stripe(key, { host: hostname, port: Number(port), protocol: "http", telemetry: false, maxNetworkRetries: 0 });
}

async function stopFake(fake: StripeFake) {
  await fake.close();
  running.splice(running.indexOf(fake), 1);
}

afterEach(async () => {
  await Promise.all(running.splice(0).map((f) => f.close()));
});
afterAll(() => {
  for (const dir of dirs) rmSync(dir, { recursive: true, force: true });
});

async function caught(promise: Promise<unknown>): Promise<Stripe.errors.StripeError> {
  try {
    await promise;
  } catch (error) {
    if (error instanceof Stripe.errors.StripeError) return error;
    throw error;
  }
  throw new Error("expected the call to fail");
}

async function seededPrice(stripe: Stripe): Promise<Stripe.Price> {
  const prices = await stripe.prices.list({ lookup_keys: [SEEDED_LOOKUP_KEY], expand: ["data.product"] });
  expect(prices.data).toHaveLength(1);
  return prices.data[0]!;
}

/** A customer on a test clock with a card attached as its default. */
async function customerOnClock(stripe: Stripe, token: string, frozen = Date.UTC(2026, 0, 10) / 1000) {
  const clock: Stripe.TestHelpers.TestClock = await stripe.testHelpers.testClocks.create({ frozen_time: frozen, name: "test" });
  const customer: Stripe.Customer = await stripe.customers.create({ email: "owner@corvid.example", name: "Corvid", test_clock: clock.id });
  const pm: Stripe.PaymentMethod = await stripe.paymentMethods.attach(token, { customer: customer.id });
  await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: pm.id } });
  return { clock, customer, pm };
}

function periodEnd(sub: Stripe.Subscription): number {
  return sub.items.data[0]!.current_period_end;
}

describe("the local Stripe's wire format", () => {
  it("answers a key that is not a test secret key with Stripe's 401", async () => {
    const { url } = await startFake();
    const error = await caught(client(url, "sk_live_abcdefghijklmnop").customers.list());
    expect(error).toBeInstanceOf(Stripe.errors.StripeAuthenticationError);
    expect(error.statusCode).toBe(401);
    expect(error.rawType).toBe("invalid_request_error");
    expect(error.message).toMatch(/Invalid API Key provided: sk_live_/);
    expect(error.message).not.toContain("abcdefghijkl");
  });

  it("answers an unknown id with resource_missing (404) in Stripe's error shape", async () => {
    const { stripe } = await startFake();
    const error = await caught(stripe.customers.retrieve("cus_doesnotexist"));
    expect(error).toBeInstanceOf(Stripe.errors.StripeInvalidRequestError);
    expect(error.statusCode).toBe(404);
    expect(error.code).toBe("resource_missing");
    expect(error.param).toBe("id");
    expect(error.message).toBe("No such customer: 'cus_doesnotexist'");
    const missing = await caught(stripe.customers.create({ test_clock: "clock_nope" }));
    expect(missing.param).toBe("test_clock");
    const parameter = await caught(stripe.testHelpers.testClocks.create({} as Stripe.TestHelpers.TestClockCreateParams));
    expect(parameter.code).toBe("parameter_missing");
    expect(parameter.param).toBe("frozen_time");
  });

  it("gives ids with Stripe's prefixes, object names and created times", async () => {
    const { stripe } = await startFake();
    const customer = await stripe.customers.create({ email: "a@example.com", metadata: { organisation: "corvid" } });
    expect(customer.id).toMatch(/^cus_[A-Za-z0-9]+$/);
    expect(customer.object).toBe("customer");
    expect(customer.metadata).toEqual({ organisation: "corvid" });
    expect(Math.abs(customer.created - Date.now() / 1000)).toBeLessThan(5);
    const price = await seededPrice(stripe);
    expect(price.id).toMatch(/^price_/);
    expect(price.unit_amount).toBe(2900);
    expect(price.currency).toBe("eur");
    expect(price.recurring?.interval).toBe("month");
    const product = price.product as Stripe.Product;
    expect(product.id).toMatch(/^prod_/);
    expect(product.name).toBe("Flyball per machine");
  });

  it("pages through a list with limit, has_more and starting_after", async () => {
    const { stripe } = await startFake();
    const made: string[] = [];
    for (let i = 0; i < 5; i++) made.push((await stripe.customers.create({ email: `c${i}@example.com` })).id);
    const first = await stripe.customers.list({ limit: 2 });
    expect(first.object).toBe("list");
    expect(first.url).toBe("/v1/customers");
    expect(first.has_more).toBe(true);
    expect(first.data.map((c) => c.id)).toEqual([made[4], made[3]]);
    const second = await stripe.customers.list({ limit: 2, starting_after: first.data[1]!.id });
    expect(second.data.map((c) => c.id)).toEqual([made[2], made[1]]);
    const all = await stripe.customers.list({ limit: 2 }).autoPagingToArray({ limit: 100 });
    expect(all.map((c) => c.id)).toEqual([...made].reverse());
    const last = await stripe.customers.list({ limit: 2, starting_after: made[1] });
    expect(last.has_more).toBe(false);
    const bad = await caught(stripe.customers.list({ starting_after: "cus_gone" }));
    expect(bad.code).toBe("resource_missing");
  });

  it("replays the first answer for a repeated idempotency key and refuses it with other parameters", async () => {
    const { stripe } = await startFake();
    const first = await stripe.customers.create({ email: "same@example.com" }, { idempotencyKey: "key-1" });
    const again = await stripe.customers.create({ email: "same@example.com" }, { idempotencyKey: "key-1" });
    expect(again.id).toBe(first.id);
    expect(again.lastResponse.headers["idempotent-replayed"]).toBe("true");
    expect((await stripe.customers.list()).data).toHaveLength(1);
    const conflict = await caught(stripe.customers.create({ email: "other@example.com" }, { idempotencyKey: "key-1" }));
    expect(conflict).toBeInstanceOf(Stripe.errors.StripeIdempotencyError);
    expect(conflict.statusCode).toBe(400);
    expect(conflict.rawType).toBe("idempotency_error");
  });

  it("reads Stripe's bracket notation for nested items and expands ids on request", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { customer } = await customerOnClock(stripe, "pm_card_visa");
    const sub = await stripe.subscriptions.create({
      customer: customer.id,
      items: [{ price: price.id, quantity: 3 }],
      metadata: { organisation_id: "org_1" },
      expand: ["latest_invoice", "customer"],
    });
    expect(sub.id).toMatch(/^sub_/);
    expect(sub.items.data[0]!.quantity).toBe(3);
    expect(sub.items.data[0]!.price.id).toBe(price.id);
    expect(sub.metadata).toEqual({ organisation_id: "org_1" });
    expect((sub.customer as Stripe.Customer).email).toBe("owner@corvid.example");
    const invoice = sub.latest_invoice as Stripe.Invoice;
    expect(invoice.id).toMatch(/^in_/);
    expect(invoice.amount_due).toBe(3 * 2900);
  });
});

describe("subscriptions, test clocks and invoices", () => {
  it("bills each period when the test clock passes its end, paid with the succeeding card", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa");
    const sub = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 2 }] });
    expect(sub.status).toBe("active");
    expect(sub.test_clock).toBe(clock.id);
    const firstEnd = periodEnd(sub);
    expect(firstEnd).toBe(Date.UTC(2026, 1, 10) / 1000);

    const advanced = await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: firstEnd + 2 * DAY });
    expect(advanced.frozen_time).toBe(firstEnd + 2 * DAY);
    expect((await stripe.testHelpers.testClocks.retrieve(clock.id)).status).toBe("ready");

    const invoices = await stripe.invoices.list({ customer: customer.id });
    expect(invoices.data).toHaveLength(2);
    const renewal: Stripe.Invoice = invoices.data[0]!;
    expect(renewal.billing_reason).toBe("subscription_cycle");
    expect(renewal.status).toBe("paid");
    expect(renewal.amount_paid).toBe(5800);
    expect(renewal.created).toBe(firstEnd);
    expect(renewal.lines.data[0]!.period).toEqual({ start: firstEnd, end: Date.UTC(2026, 2, 10) / 1000 });
    expect(renewal.parent?.subscription_details?.subscription).toBe(sub.id);
    expect(renewal.hosted_invoice_url).toMatch(/\/invoices\/in_/);
    const page = await fetch(renewal.hosted_invoice_url!);
    expect(await page.text()).toContain(renewal.number!);
    const after = await stripe.subscriptions.retrieve(sub.id);
    expect(after.status).toBe("active");
    expect(after.latest_invoice).toBe(renewal.id);
  });

  it("fails the period's invoice with the declining card and leaves the subscription past due", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa");
    const sub = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 1 }] });
    const declining = await stripe.paymentMethods.attach("pm_card_chargeDeclined", { customer: customer.id });
    await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: declining.id } });
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: periodEnd(sub) + DAY });
    const [failed] = (await stripe.invoices.list({ subscription: sub.id, status: "open" })).data;
    expect(failed?.attempted).toBe(true);
    expect(failed?.attempt_count).toBe(1);
    expect(failed?.amount_paid).toBe(0);
    expect((await stripe.subscriptions.retrieve(sub.id)).status).toBe("past_due");
    // With a working card again, paying the open invoice brings the subscription back.
    const visa = await stripe.paymentMethods.attach("pm_card_visa", { customer: customer.id });
    await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: visa.id } });
    const paid = await stripe.invoices.pay(failed!.id);
    expect(paid.status).toBe("paid");
    expect((await stripe.subscriptions.retrieve(sub.id)).status).toBe("active");
  });

  it("retries a failed renewal on its schedule: paid once the card works, unpaid after the last failure", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const recovering = await customerOnClock(stripe, "pm_card_chargeDeclined");
    const failing = await customerOnClock(stripe, "pm_card_chargeDeclined");
    for (const { customer } of [recovering, failing]) {
      const visa = await stripe.paymentMethods.attach("pm_card_visa", { customer: customer.id });
      await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id }], default_payment_method: visa.id });
    }
    const [a] = (await stripe.subscriptions.list({ customer: recovering.customer.id })).data;
    const [b] = (await stripe.subscriptions.list({ customer: failing.customer.id })).data;
    // Both now charge the customer's declining card.
    await stripe.subscriptions.update(a!.id, { default_payment_method: "" });
    await stripe.subscriptions.update(b!.id, { default_payment_method: "" });
    const end = periodEnd(a!);
    await stripe.testHelpers.testClocks.advance(recovering.clock.id, { frozen_time: end + DAY });
    await stripe.testHelpers.testClocks.advance(failing.clock.id, { frozen_time: end + DAY });
    const [open] = (await stripe.invoices.list({ subscription: a!.id, status: "open" })).data;
    expect(open!.next_payment_attempt).toBe(end + 3 * DAY);

    const visa = await stripe.paymentMethods.attach("pm_card_visa", { customer: recovering.customer.id });
    await stripe.customers.update(recovering.customer.id, { invoice_settings: { default_payment_method: visa.id } });
    await stripe.testHelpers.testClocks.advance(recovering.clock.id, { frozen_time: end + 4 * DAY });
    const retried = await stripe.invoices.retrieve(open!.id);
    expect(retried.status).toBe("paid");
    expect(retried.attempt_count).toBe(2);
    expect((await stripe.subscriptions.retrieve(a!.id)).status).toBe("active");

    await stripe.testHelpers.testClocks.advance(failing.clock.id, { frozen_time: end + 6 * DAY });
    expect((await stripe.subscriptions.retrieve(b!.id)).status).toBe("past_due");
    await stripe.testHelpers.testClocks.advance(failing.clock.id, { frozen_time: end + 8 * DAY });
    const [unpaidInvoice] = (await stripe.invoices.list({ subscription: b!.id, status: "open" })).data;
    expect(unpaidInvoice!.attempt_count).toBe(4);
    expect(unpaidInvoice!.next_payment_attempt).toBeNull();
    expect((await stripe.subscriptions.retrieve(b!.id)).status).toBe("unpaid");
  });

  it("starts with a free trial and bills the first period when the trial ends", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa");
    const sub = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 3 }], trial_period_days: 14 });
    expect(sub.status).toBe("trialing");
    expect(sub.trial_end).toBe(clock.frozen_time + 14 * DAY);
    expect(periodEnd(sub)).toBe(sub.trial_end);
    const [trialInvoice] = (await stripe.invoices.list({ subscription: sub.id })).data;
    expect(trialInvoice).toMatchObject({ amount_due: 0, status: "paid" });
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: sub.trial_end! + DAY });
    const after = await stripe.subscriptions.retrieve(sub.id, { expand: ["latest_invoice"] });
    expect(after.status).toBe("active");
    expect(after.latest_invoice as Stripe.Invoice).toMatchObject({ amount_paid: 3 * 2900, status: "paid" });
  });

  it("refuses a first payment on the declining card with a card error when asked to", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { customer } = await customerOnClock(stripe, "pm_card_chargeDeclined");
    const error = await caught(stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id }], payment_behavior: "error_if_incomplete" }));
    expect(error).toBeInstanceOf(Stripe.errors.StripeCardError);
    expect(error.statusCode).toBe(402);
    expect(error.code).toBe("card_declined");
    expect(error.decline_code).toBe("generic_decline");
    expect((await stripe.subscriptions.list({ customer: customer.id, status: "all" })).data).toHaveLength(0);
    const incomplete = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id }] });
    expect(incomplete.status).toBe("incomplete");
  });

  it("records proration for a quantity change on the next period's invoice", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa");
    const sub = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 2 }] });
    const start = sub.items.data[0]!.current_period_start;
    const end = periodEnd(sub);
    const half = start + Math.round((end - start) / 2);
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: half });
    const updated = await stripe.subscriptions.update(sub.id, { items: [{ id: sub.items.data[0]!.id, quantity: 5 }], proration_behavior: "create_prorations" });
    expect(updated.items.data[0]!.quantity).toBe(5);

    const preview: Stripe.Invoice = await stripe.invoices.createPreview({ customer: customer.id, subscription: sub.id });
    const share = (end - half) / (end - start);
    const expectedProration = Math.round(5 * 2900 * share) - Math.round(2 * 2900 * share);
    expect(preview.amount_due).toBe(5 * 2900 + expectedProration);

    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: end + DAY });
    const [renewal] = (await stripe.invoices.list({ subscription: sub.id, limit: 1 })).data;
    const prorations = renewal!.lines.data.filter((l) => l.parent?.invoice_item_details?.proration);
    expect(prorations.map((l) => l.amount)).toEqual([-Math.round(2 * 2900 * share), Math.round(5 * 2900 * share)]);
    expect(renewal!.amount_paid).toBe(5 * 2900 + expectedProration);
    expect(renewal!.total).toBe(renewal!.lines.data.reduce((sum, l) => sum + l.amount, 0));
  });

  it("lists a customer's subscriptions, cancels one at once and another at the period's end", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa");
    const a = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id }] });
    const b = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id }] });
    expect((await stripe.subscriptions.list({ customer: customer.id })).data.map((s) => s.id)).toEqual([b.id, a.id]);
    const canceled = await stripe.subscriptions.cancel(a.id);
    expect(canceled.status).toBe("canceled");
    expect(canceled.ended_at).toBe(clock.frozen_time);
    expect((await stripe.subscriptions.list({ customer: customer.id })).data.map((s) => s.id)).toEqual([b.id]);
    const ending = await stripe.subscriptions.update(b.id, { cancel_at_period_end: true });
    expect(ending.cancel_at).toBe(periodEnd(b));
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: periodEnd(b) + DAY });
    const ended = await stripe.subscriptions.retrieve(b.id);
    expect(ended.status).toBe("canceled");
    expect((await stripe.invoices.list({ subscription: b.id })).data).toHaveLength(1);
  });
});

describe("webhooks and restarts", () => {
  type Received = { body: string; signature: string };
  let receiver: Server;
  let received: Received[];
  let failuresLeft: number;
  let receiverUrl: string;

  beforeEach(async () => {
    received = [];
    failuresLeft = 0;
    receiver = createServer((req, res) => {
      const chunks: Buffer[] = [];
      req.on("data", (c: Buffer) => chunks.push(c));
      req.on("end", () => {
        if (failuresLeft > 0) {
          failuresLeft -= 1;
          res.writeHead(500).end();
          return;
        }
        received.push({ body: Buffer.concat(chunks).toString("utf8"), signature: String(req.headers["stripe-signature"]) });
        res.writeHead(200).end();
      });
    });
    await new Promise<void>((resolve) => receiver.listen(0, "127.0.0.1", resolve));
    receiverUrl = `http://127.0.0.1:${(receiver.address() as AddressInfo).port}/api/webhooks/stripe`;
  });
  afterEach(async () => {
    await new Promise<void>((resolve) => receiver.close(() => resolve()));
  });

  async function eventsOfType(stripe: Stripe, type: string, count = 1): Promise<Stripe.Event[]> {
    for (let i = 0; i < 200; i++) {
      const events = received.map((r) => stripe.webhooks.constructEvent(r.body, r.signature, SECRET)).filter((e) => e.type === type);
      if (events.length >= count) return events;
      await new Promise((resolve) => setTimeout(resolve, 20));
    }
    throw new Error(`no ${type} event arrived`);
  }

  it("sends signed events that constructEvent accepts, and a wrong secret does not", async () => {
    const { stripe } = await startFake({ webhookUrl: receiverUrl });
    const price = await seededPrice(stripe);
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa");
    const sub = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 2 }] });
    const [created] = await eventsOfType(stripe, "customer.subscription.created");
    expect(created!.id).toMatch(/^evt_/);
    expect(created!.request?.id).toBe(sub.lastResponse.requestId);
    expect((created!.data.object as Stripe.Subscription).id).toBe(sub.id);
    const [paid] = await eventsOfType(stripe, "invoice.paid");
    expect((paid!.data.object as Stripe.Invoice).amount_paid).toBe(5800);

    await stripe.subscriptions.update(sub.id, { items: [{ id: sub.items.data[0]!.id, quantity: 3 }] });
    const [updated] = await eventsOfType(stripe, "customer.subscription.updated");
    expect((updated!.data.object as Stripe.Subscription).items.data[0]!.quantity).toBe(3);
    expect(updated!.data.previous_attributes).toHaveProperty("items");

    const declining = await stripe.paymentMethods.attach("pm_card_chargeDeclined", { customer: customer.id });
    await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: declining.id } });
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: periodEnd(sub) + DAY });
    const [failed] = await eventsOfType(stripe, "invoice.payment_failed");
    expect((failed!.data.object as Stripe.Invoice).status).toBe("open");
    const pastDue = (await eventsOfType(stripe, "customer.subscription.updated", 2))[1]!;
    expect((pastDue.data.object as Stripe.Subscription).status).toBe("past_due");
    expect(pastDue.data.previous_attributes).toMatchObject({ status: "active" });

    await stripe.subscriptions.cancel(sub.id);
    await eventsOfType(stripe, "customer.subscription.deleted");
    const sample = received[0]!;
    expect(sample.signature).toMatch(/^t=\d+,v1=[0-9a-f]{64}$/);
    expect(() => stripe.webhooks.constructEvent(sample.body, sample.signature, "whsec_wrong")).toThrow(Stripe.errors.StripeSignatureVerificationError);
    // The same events are listed by the API.
    const listed = await stripe.events.list({ type: "invoice.payment_failed" });
    expect(listed.data.map((e) => e.id)).toEqual([failed!.id]);
  });

  it("sends checkout.session.completed after the card page, with a customer it created from the e-mail", async () => {
    const { stripe } = await startFake({ webhookUrl: receiverUrl });
    const price = await seededPrice(stripe);
    const session = await stripe.checkout.sessions.create({
      mode: "subscription",
      customer_email: "new-owner@example.com",
      client_reference_id: "org_42",
      line_items: [{ price: price.id, quantity: 1 }],
      success_url: "http://app.example/done",
    });
    const paid = await fetch(session.url!, { method: "POST", body: new URLSearchParams({ number: "4242424242424242", expiry: "12/34", cvc: "123" }), redirect: "manual" });
    expect(paid.status).toBe(303);
    const [completed] = await eventsOfType(stripe, "checkout.session.completed");
    const done = completed!.data.object as Stripe.Checkout.Session;
    expect(done).toMatchObject({ id: session.id, client_reference_id: "org_42", status: "complete", payment_status: "paid" });
    const customer = await stripe.customers.retrieve(done.customer as string);
    expect((customer as Stripe.Customer).email).toBe("new-owner@example.com");
    const [created] = await eventsOfType(stripe, "customer.subscription.created");
    expect((created!.data.object as Stripe.Subscription).id).toBe(done.subscription);
  });

  it("retries a delivery the receiver refused until it answers 2xx", async () => {
    failuresLeft = 2;
    const { stripe, fake } = await startFake({ webhookUrl: receiverUrl });
    const customer = await stripe.customers.create({ email: "retry@example.com" });
    const [event] = await eventsOfType(stripe, "customer.created");
    expect((event!.data.object as Stripe.Customer).id).toBe(customer.id);
    expect(failuresLeft).toBe(0);
    expect(fake.pendingDeliveries()).toBe(0);
  });

  it("keeps objects, idempotency keys and pending deliveries across a restart", async () => {
    failuresLeft = 1_000;
    const first = await startFake({ webhookUrl: receiverUrl, retryBaseMs: 60_000 });
    const price = await seededPrice(first.stripe);
    const customer = await first.stripe.customers.create({ email: "kept@example.com" }, { idempotencyKey: "restart-1" });
    const sub = await first.stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id }], default_payment_method: (await first.stripe.paymentMethods.attach("pm_card_visa", { customer: customer.id })).id });
    await new Promise((resolve) => setTimeout(resolve, 100));
    expect(first.fake.pendingDeliveries()).toBeGreaterThan(0);
    await stopFake(first.fake);

    failuresLeft = 0;
    const second = await startFake({ webhookUrl: receiverUrl, retryBaseMs: 20 }, first.dir);
    expect((await second.stripe.customers.retrieve(customer.id)) as Stripe.Customer).toMatchObject({ email: "kept@example.com" });
    expect((await second.stripe.subscriptions.retrieve(sub.id)).status).toBe("active");
    expect((await second.stripe.prices.list({ lookup_keys: [SEEDED_LOOKUP_KEY] })).data.map((p) => p.id)).toEqual([price.id]);
    const replay = await second.stripe.customers.create({ email: "kept@example.com" }, { idempotencyKey: "restart-1" });
    expect(replay.id).toBe(customer.id);
    // Deliveries that were waiting for their next attempt go out after the restart.
    const [created] = await eventsOfType(second.stripe, "customer.subscription.created");
    expect((created!.data.object as Stripe.Subscription).id).toBe(sub.id);
  });
});

describe("the hosted pages", () => {
  async function checkout(stripe: Stripe, quantity = 2) {
    const price = await seededPrice(stripe);
    const customer = await stripe.customers.create({ email: "owner@pellworth.example", name: "Pellworth" });
    const session: Stripe.Checkout.Session = await stripe.checkout.sessions.create({
      mode: "subscription",
      customer: customer.id,
      line_items: [{ price: price.id, quantity }],
      success_url: "http://app.example/billing?session={CHECKOUT_SESSION_ID}",
      cancel_url: "http://app.example/billing",
      client_reference_id: "org_pellworth",
      subscription_data: { metadata: { organisation: "pellworth" } },
    });
    return { customer, session };
  }

  const post = (url: string, form: Record<string, string>) =>
    fetch(url, { method: "POST", body: new URLSearchParams(form), redirect: "manual" });

  it("subscribes after the succeeding card on the checkout page", async () => {
    const { stripe } = await startFake();
    const { customer, session } = await checkout(stripe);
    expect(session.id).toMatch(/^cs_test_/);
    expect(session.status).toBe("open");
    const page = await fetch(session.url!);
    expect(await page.text()).toContain("Pay €58.00");
    const answer = await post(session.url!, { name: "P. Owner", number: "4242 4242 4242 4242", expiry: "12 / 34", cvc: "123" });
    expect(answer.status).toBe(303);
    expect(answer.headers.get("location")).toBe(`http://app.example/billing?session=${session.id}`);
    const done = await stripe.checkout.sessions.retrieve(session.id, { expand: ["subscription"] });
    expect(done.status).toBe("complete");
    expect(done.payment_status).toBe("paid");
    const sub = done.subscription as Stripe.Subscription;
    expect(sub.status).toBe("active");
    expect(sub.items.data[0]!.quantity).toBe(2);
    expect(sub.metadata).toEqual({ organisation: "pellworth" });
    const updated = await stripe.customers.retrieve(customer.id);
    expect((updated as Stripe.Customer).invoice_settings.default_payment_method).toMatch(/^pm_/);
  });

  it("says the card was declined and creates nothing", async () => {
    const { stripe } = await startFake();
    const { customer, session } = await checkout(stripe);
    const answer = await post(session.url!, { number: "4000000000000002", expiry: "12/34", cvc: "123" });
    expect(answer.status).toBe(402);
    expect(await answer.text()).toContain("Your card was declined.");
    expect((await stripe.checkout.sessions.retrieve(session.id)).status).toBe("open");
    expect((await stripe.subscriptions.list({ customer: customer.id, status: "all" })).data).toHaveLength(0);
  });

  it("asks for the bank's confirmation with the authentication card, then subscribes", async () => {
    const { stripe } = await startFake();
    const { session } = await checkout(stripe, 1);
    const card = { number: "4000002500003155", expiry: "12/34", cvc: "123" };
    const ask = await post(session.url!, card);
    expect(ask.status).toBe(200);
    expect(await ask.text()).toContain("Confirm with your bank");
    const refused = await post(`${session.url}/confirm`, { ...card, decision: "refuse" });
    expect(refused.status).toBe(402);
    expect((await stripe.checkout.sessions.retrieve(session.id)).status).toBe("open");
    const approved = await post(`${session.url}/confirm`, { ...card, decision: "approve" });
    expect(approved.status).toBe(303);
    const done = await stripe.checkout.sessions.retrieve(session.id);
    expect(done.status).toBe("complete");
  });

  it("changes the card on the portal, which pays the open invoice, and cancels at the period's end", async () => {
    const { stripe } = await startFake();
    const price = await seededPrice(stripe);
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa");
    const sub = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id }] });
    const declining = await stripe.paymentMethods.attach("pm_card_chargeDeclined", { customer: customer.id });
    await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: declining.id } });
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: periodEnd(sub) + DAY });
    expect((await stripe.subscriptions.retrieve(sub.id)).status).toBe("past_due");

    const portal: Stripe.BillingPortal.Session = await stripe.billingPortal.sessions.create({ customer: customer.id, return_url: "http://app.example/billing" });
    expect(portal.id).toMatch(/^bps_/);
    expect(await (await fetch(portal.url)).text()).toContain("Payment overdue");
    const changed = await post(`${portal.url}/card`, { number: "4242424242424242", expiry: "12/34", cvc: "123" });
    expect(await changed.text()).toContain("The card is saved.");
    expect((await stripe.subscriptions.retrieve(sub.id)).status).toBe("active");
    expect((await stripe.invoices.list({ subscription: sub.id, status: "open" })).data).toHaveLength(0);

    await post(`${portal.url}/cancel`, { subscription: sub.id });
    expect((await stripe.subscriptions.retrieve(sub.id)).cancel_at_period_end).toBe(true);
  });
});
