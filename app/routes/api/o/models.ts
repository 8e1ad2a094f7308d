// GET /api/v1/o/:slug/models (each with its loop templates)
import { getDb } from "~/.server/db/client";
import { apiError, methodNotAllowed, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { searchParams } from "~/.server/fleet/query";
import { PageQuerySchema } from "~/lib/fleet/schemas";
import { listModels } from "~/.server/fleet/registry";
import type { Route } from "./+types/models";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "registry:read");
    const query = PageQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listModels(getDb(), { organisationId: caller.scope.organisationId, ...query.data });
  });
}

export const action = () => methodNotAllowed("GET");
