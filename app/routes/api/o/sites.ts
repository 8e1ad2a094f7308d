// GET /api/v1/o/:slug/sites?customerId=
import { getDb } from "~/.server/db/client";
import { apiError, methodNotAllowed, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { searchParams } from "~/.server/fleet/query";
import { optionalId, PageQuerySchema } from "~/lib/fleet/schemas";
import { listSites } from "~/.server/fleet/registry";
import type { Route } from "./+types/sites";

const SitesQuerySchema = PageQuerySchema.extend({ customerId: optionalId });

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const query = SitesQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listSites(getDb(), caller.scope, query.data);
  });
}

export const action = () => methodNotAllowed("GET");
