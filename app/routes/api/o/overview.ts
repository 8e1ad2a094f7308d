// GET /api/v1/o/:slug/overview?customerId=&siteId=&modelId=
import { getDb } from "~/.server/db/client";
import { apiError, methodNotAllowed, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { searchParams } from "~/.server/fleet/query";
import { getOverview } from "~/.server/health/overview";
import { OverviewQuerySchema } from "~/lib/health/api-types";
import type { Route } from "./+types/overview";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const query = OverviewQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return getOverview(getDb(), caller.scope, query.data);
  });
}

export const action = () => methodNotAllowed("GET");
