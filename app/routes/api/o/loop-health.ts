// GET /api/v1/o/:slug/loops/:id/health
import { getDb } from "~/.server/db/client";
import { methodNotAllowed } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { getLoopHealth } from "~/.server/health/overview";
import type { Route } from "./+types/loop-health";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    return getLoopHealth(getDb(), caller.scope, params.id);
  });
}

export const action = () => methodNotAllowed("GET");
