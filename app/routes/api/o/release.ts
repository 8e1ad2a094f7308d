// GET /api/v1/o/:slug/releases/:id → {id, state, gainSetId, heldReason, waves, targets, …}
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { apiError, methodNotAllowed } from "~/.server/http/json";
import { getRelease } from "~/.server/releases/releases";
import type { Route } from "./+types/release";

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "registry:read");
    if (!UUID.test(params.id)) return apiError(404, "not_found", "No such release.");
    return getRelease(getDb(), { organisationId: caller.scope.organisationId, releaseId: params.id });
  });
}

export const action = () => methodNotAllowed("GET");
