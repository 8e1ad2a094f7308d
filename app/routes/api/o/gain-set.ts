// GET /api/v1/o/:slug/gain-sets/:id → the gain set with its `checks` and `history`
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { apiError, methodNotAllowed } from "~/.server/http/json";
import { getGainSet } from "~/.server/tuning/gain-sets";
import type { Route } from "./+types/gain-set";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "registry:read");
    const found = await getGainSet(getDb(), { organisationId: caller.scope.organisationId, id: params.id });
    return found ?? apiError(404, "not_found", "No such gain set in this organisation.");
  });
}

export const action = () => methodNotAllowed("GET");
