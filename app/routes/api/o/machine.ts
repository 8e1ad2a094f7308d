// GET /api/v1/o/:slug/machines/:id (with its loops)
import { getDb } from "~/.server/db/client";
import { apiError, methodNotAllowed } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { getMachine } from "~/.server/fleet/machines";
import type { Route } from "./+types/machine";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const machine = await getMachine(getDb(), caller.scope, params.id);
    if (!machine) return apiError(404, "not_found", "No such machine.");
    return { machine };
  });
}

export const action = () => methodNotAllowed("GET");
