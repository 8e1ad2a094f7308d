// The one Stripe client: the real `stripe` SDK, pointed by STRIPE_BASE_URL at fakes/stripe locally.
import Stripe from "stripe";
import { env } from "~/.server/env";

/** The per-machine monthly price (the fake seeds it; in Stripe it is set up once with this lookup key). */
export const PRICE_LOOKUP_KEY = "flyball_per_machine_monthly";

let client: Stripe | undefined;

export function stripeClientFor(secretKey: string, baseUrl: string): Stripe {
  const url = new URL(baseUrl);
  const protocol = url.protocol === "https:" ? "https" : "http";
  return new Stripe(secretKey, {
    host: url.hostname,
    port: Number(url.port || (protocol === "https" ? 443 : 80)),
    protocol,
    telemetry: false,
    // Writes carry idempotency keys, so one retry after a dropped connection is safe.
    maxNetworkRetries: 1,
  });
}

export function getStripe(): Stripe {
  if (!client) {
    const { STRIPE_SECRET_KEY, STRIPE_BASE_URL } = env();
    client = stripeClientFor(STRIPE_SECRET_KEY, STRIPE_BASE_URL);
  }
  return client;
}

export async function getMachinePrice(stripe: Stripe): Promise<Stripe.Price> {
  const prices = await stripe.prices.list({ lookup_keys: [PRICE_LOOKUP_KEY], active: true, limit: 1 });
  const price = prices.data[0];
  if (!price) throw new Error(`No active Stripe price with lookup key ${PRICE_LOOKUP_KEY}.`);
  return price;
}
