// GET /api/v1/o/:slug/releases?page=&pageSize=&state= → {items, total, page, pageSize}
// POST /api/v1/o/:slug/releases {gainSetId, target, pilot, guard, confirmMachineCount} → 201 {id, state}
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { searchParams } from "~/.server/fleet/query";
import { handleApi } from "~/.server/http/errors";
import { apiError, jsonResponse, methodNotAllowed, readJsonBody, zodIssues } from "~/.server/http/json";
import { requireActiveSubscription } from "~/.server/billing/enforce";
import { createRelease, listReleases } from "~/.server/releases/releases";
import { CreateReleaseSchema, ReleaseListQuerySchema } from "~/lib/release/schemas";
import type { Route } from "./+types/releases";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "registry:read");
    const query = ReleaseListQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listReleases(getDb(), { organisationId: caller.scope.organisationId, ...query.data });
  });
}

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("GET", "POST");
    const caller = await requireApiCaller(request, params.slug, "release:operate");
    const body = await readJsonBody(request, { limit: 256 * 1024 });
    if (!body.ok) return body.response;
    const input = CreateReleaseSchema.safeParse(body.value);
    if (!input.success) return apiError(400, "invalid_body", "Check the release's fields.", zodIssues(input.error));
    // Running machines keep working when billing is held; starting a release does not (402).
    await requireActiveSubscription(getDb(), caller.scope.organisationId);
    const created = await createRelease(getDb(), { organisationId: caller.scope.organisationId, actor: caller.actor, input: input.data });
    return jsonResponse(created, 201);
  });
}
