// The local Stripe (started by scripts/test.sh) through the real `stripe` SDK, and signed
// webhook deliveries made the way Stripe signs them.
import Stripe from "stripe";
import { APP_URL } from "./http";

export const STRIPE_BASE_URL = process.env.STRIPE_BASE_URL ?? "http://127.0.0.1:3036";
export const WEBHOOK_SECRET = process.env.STRIPE_WEBHOOK_SECRET ?? "whsec_test_secret_not_for_production";

export function stripeAt(baseUrl = STRIPE_BASE_URL): Stripe {
  const { hostname, port } = new URL(baseUrl);
  return new Stripe(process.env.STRIPE_SECRET_KEY ?? "sk_test_flyball_tests", { host: hostname, port: Number(port), protocol: "http", telemetry: false, maxNetworkRetries: 0 });
}

/** POST an event to the app's webhook route, signed with `secret` (or with the header given). */
export function deliver(event: Stripe.Event, { secret = WEBHOOK_SECRET, header }: { secret?: string; header?: string | null } = {}) {
  const payload = JSON.stringify(event);
  const signature = header === undefined ? stripeAt().webhooks.generateTestHeaderString({ payload, secret }) : header;
  return fetch(`${APP_URL}/api/webhooks/stripe`, {
    method: "POST",
    headers: { "content-type": "application/json", ...(signature === null ? {} : { "stripe-signature": signature }) },
    body: payload,
  });
}

/** Poll until `check` answers something truthy (the worker applies webhooks a moment later). */
export async function eventually<T>(what: string, check: () => Promise<T | null | undefined | false>, seconds = 30): Promise<T> {
  const deadline = Date.now() + seconds * 1000;
  for (;;) {
    const value = await check();
    if (value) return value;
    if (Date.now() > deadline) throw new Error(`gave up waiting: ${what}`);
    await new Promise((r) => setTimeout(r, 250));
  }
}

/** A customer on a test clock with `token` (e.g. pm_card_visa) as its default card. */
export async function customerOnClock(stripe: Stripe, token: string, { frozen = Math.floor(Date.now() / 1000), metadata = {} }: { frozen?: number; metadata?: Record<string, string> } = {}) {
  const clock = await stripe.testHelpers.testClocks.create({ frozen_time: frozen, name: "billing test" });
  const customer = await stripe.customers.create({ name: "Billing test", test_clock: clock.id, metadata });
  const card = await stripe.paymentMethods.attach(token, { customer: customer.id });
  await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: card.id } });
  return { clock, customer, card };
}

export async function machinePrice(stripe: Stripe): Promise<Stripe.Price> {
  const prices = await stripe.prices.list({ lookup_keys: ["flyball_per_machine_monthly"] });
  return prices.data[0]!;
}
