// GET /api/v1/o/:slug/alert-subscription → the caller's own {kinds, minSeverity, siteIds, summaryAfter}
// PUT /api/v1/o/:slug/alert-subscription {kinds, minSeverity, siteIds, summaryAfter} → the saved one
// A member's own setting: API tokens have none (403). Site managers' sites are clamped to their own.
import { getDb } from "~/.server/db/client";
import { apiError, invalidBody, methodNotAllowed, readJsonBody } from "~/.server/http/json";
import { requireApiCaller, type ApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { getAlertSubscription, saveAlertSubscription } from "~/.server/health/alerts";
import { AlertSubscriptionSchema } from "~/lib/health/api-types";
import type { Route } from "./+types/alert-subscription";

function memberOf(caller: ApiCaller) {
  if (!caller.membership) throw apiError(403, "forbidden", "Alert settings belong to a member: sign in to change yours.");
  return { memberId: caller.membership.memberId, role: caller.membership.role };
}

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    return getAlertSubscription(getDb(), caller.scope, memberOf(caller));
  });
}

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "PUT") return methodNotAllowed("GET", "PUT");
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const member = memberOf(caller);
    const body = await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    const input = AlertSubscriptionSchema.strict().safeParse(body.value);
    if (!input.success) return invalidBody(input.error);
    return saveAlertSubscription(getDb(), caller.scope, member, input.data);
  });
}
