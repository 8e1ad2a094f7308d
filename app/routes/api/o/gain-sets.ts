// GET  /api/v1/o/:slug/gain-sets?loopTemplateId=&state=&page=&pageSize= → {items, total, page, pageSize}
// POST /api/v1/o/:slug/gain-sets {loopTemplateId, form, gains, filterN?, setpointWeight?, antiWindup?, note, …} → 201 {id, version, state: "draft"}
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { searchParams } from "~/.server/fleet/query";
import { handleApi } from "~/.server/http/errors";
import { apiError, invalidBody, jsonResponse, methodNotAllowed, readJsonBody, zodIssues } from "~/.server/http/json";
import { createGainSet, listGainSets } from "~/.server/tuning/gain-sets";
import { CreateGainSetSchema, GainSetListQuerySchema } from "~/lib/gain-sets/schemas";
import type { Route } from "./+types/gain-sets";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "registry:read");
    const query = GainSetListQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listGainSets(getDb(), { organisationId: caller.scope.organisationId }, query.data);
  });
}

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("GET", "POST");
    const caller = await requireApiCaller(request, params.slug, "tuning:use");
    const body = await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    const input = CreateGainSetSchema.safeParse(body.value);
    if (!input.success) return invalidBody(input.error, "invalid_body");
    const created = await createGainSet(getDb(), { organisationId: caller.scope.organisationId, actor: caller.actor, input: input.data });
    return jsonResponse({ id: created.id, version: created.version, state: created.state }, 201);
  });
}
