// POST /api/webhooks/stripe — Stripe's events. The signature is checked on the raw body; a bad
// or missing one is answered 400 and nothing is stored. A verified event is stored once by its
// id and handed to a job (app/.server/billing/webhooks.ts); a replay is answered 200 and ignored.
import { receiveStripeWebhook } from "~/.server/billing/webhooks";
import { getDb } from "~/.server/db/client";
import { readLimitedText } from "~/.server/http/body";
import { handleApi } from "~/.server/http/errors";
import { jsonResponse, methodNotAllowed, payloadTooLarge } from "~/.server/http/json";
import type { Route } from "./+types/stripe";

/** Stripe's events are far smaller; anything larger is not one. */
const WEBHOOK_BODY_LIMIT = 512 * 1024;

export const loader = () => methodNotAllowed("POST");

export function action({ request }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const body = await readLimitedText(request, WEBHOOK_BODY_LIMIT);
    if (body === null) return payloadTooLarge(`The body is larger than ${WEBHOOK_BODY_LIMIT} bytes.`);
    const { duplicate } = await receiveStripeWebhook(getDb(), { body, signature: request.headers.get("stripe-signature") });
    return jsonResponse({ received: true, duplicate });
  });
}
