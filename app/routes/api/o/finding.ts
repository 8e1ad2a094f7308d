// GET /api/v1/o/:slug/findings/:id → the finding with its history
import { getDb } from "~/.server/db/client";
import { methodNotAllowed } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { getFinding } from "~/.server/health/findings";
import type { Route } from "./+types/finding";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    return getFinding(getDb(), caller.scope, params.id);
  });
}

export const action = () => methodNotAllowed("GET");
