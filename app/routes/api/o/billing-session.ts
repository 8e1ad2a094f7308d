// POST /api/v1/o/:slug/billing/checkout → {url}: a hosted checkout for the per-machine plan.
// POST /api/v1/o/:slug/billing/portal → {url}: the hosted portal (card, cancellation).
// Owner only; the body is ignored (send `{}`).
import { createCheckout, createPortal } from "~/.server/billing/account";
import { getStripe } from "~/.server/billing/stripe";
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { apiError, methodNotAllowed } from "~/.server/http/json";
import type { Route } from "./+types/billing-session";

export const loader = () => methodNotAllowed("POST");

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const caller = await requireApiCaller(request, params.slug, "billing:manage");
    const input = { organisationId: caller.organisation.id, slug: caller.organisation.slug };
    switch (params.session) {
      case "checkout":
        return createCheckout(getDb(), getStripe(), input);
      case "portal":
        return createPortal(getDb(), getStripe(), input);
      default:
        return apiError(404, "not_found", "No such billing session.");
    }
  });
}
