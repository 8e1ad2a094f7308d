// GET /api/v1/o/:slug/billing (owner only) → {plan, status, stripeCustomerId, subscriptionId,
// machinesBilled, activeMachines, trialEndsAt, currentPeriodEnd, nextInvoiceEstimate: {amount,
// currency}, invoices: [{id, number, status, amountDue, amountPaid, currency, periodStart,
// periodEnd, hostedInvoiceUrl}]}
import { getBillingSummary } from "~/.server/billing/account";
import { getStripe } from "~/.server/billing/stripe";
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { methodNotAllowed } from "~/.server/http/json";
import type { Route } from "./+types/billing";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "billing:manage");
    return getBillingSummary(getDb(), getStripe(), { organisationId: caller.organisation.id });
  });
}

export const action = () => methodNotAllowed("GET");
