// GET /api/v1/o/:slug/loops/:id/digests?from=&to=&bucket=&page=&pageSize=
import { getDb } from "~/.server/db/client";
import { apiError, methodNotAllowed, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { DigestRangeQuerySchema, listLoopDigests } from "~/.server/fleet/digests";
import { searchParams } from "~/.server/fleet/query";
import type { Route } from "./+types/loop-digests";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const query = DigestRangeQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listLoopDigests(getDb(), caller.scope, { loopId: params.id, query: query.data });
  });
}

export const action = () => methodNotAllowed("GET");
