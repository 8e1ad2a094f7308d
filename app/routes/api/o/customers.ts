// GET /api/v1/o/:slug/customers
import { getDb } from "~/.server/db/client";
import { apiError, methodNotAllowed, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { searchParams } from "~/.server/fleet/query";
import { PageQuerySchema } from "~/lib/fleet/schemas";
import { listCustomers } from "~/.server/fleet/registry";
import type { Route } from "./+types/customers";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const query = PageQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listCustomers(getDb(), caller.scope, query.data);
  });
}

export const action = () => methodNotAllowed("GET");
