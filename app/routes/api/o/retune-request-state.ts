// POST /api/v1/o/:slug/retune-requests/:id/state {state, comment} → 200 the request with its history
// Capability tuning:use (engineers, admins, owners: the people who retune). Moves:
// open → in_progress → done | declined, and open → done | declined; others answer 409.
import { getDb } from "~/.server/db/client";
import { invalidBody, methodNotAllowed, readJsonBody } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { setRetuneRequestState } from "~/.server/health/retune";
import { RetuneStateSchema } from "~/lib/health/api-types";
import type { Route } from "./+types/retune-request-state";

export const loader = () => methodNotAllowed("POST");

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const caller = await requireApiCaller(request, params.slug, "tuning:use");
    const body = await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    const input = RetuneStateSchema.strict().safeParse(body.value);
    if (!input.success) return invalidBody(input.error);
    return setRetuneRequestState(getDb(), caller.scope, caller.actor, params.id, input.data);
  });
}
