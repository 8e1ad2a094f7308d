// GET /api/v1/o/:slug/findings?state=&kind=&severity=&machineId=&loopId=&customerId=&siteId=&sort=&dir=&page=&pageSize=
import { getDb } from "~/.server/db/client";
import { apiError, methodNotAllowed, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { searchParams } from "~/.server/fleet/query";
import { listFindings } from "~/.server/health/findings";
import { FindingsQuerySchema } from "~/lib/health/api-types";
import type { Route } from "./+types/findings";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const query = FindingsQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listFindings(getDb(), caller.scope, query.data);
  });
}

export const action = () => methodNotAllowed("GET");
