// GET  /api/v1/o/:slug/retune-requests?state=&machineId=&page=&pageSize=  (site managers: their sites'; others: all)
// POST /api/v1/o/:slug/retune-requests {machineId, loopId?, observation} → 201 {id, state: "open"}
//      capability retune:request (site managers), their machines only (others: 404).
import { z } from "zod";
import { getDb } from "~/.server/db/client";
import { apiError, invalidBody, jsonResponse, methodNotAllowed, readJsonBody, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { searchParams } from "~/.server/fleet/query";
import { createRetuneRequest, listRetuneRequests } from "~/.server/health/retune";
import { RETUNE_STATES, RetuneCreateSchema } from "~/lib/health/api-types";
import type { Route } from "./+types/retune-requests";

const blank = (v: unknown) => (v === "" ? undefined : v);
const RetuneListQuerySchema = z.object({
  state: z.preprocess(blank, z.enum(RETUNE_STATES).optional()),
  machineId: z.preprocess(blank, z.string().uuid().optional()),
  page: z.preprocess(blank, z.coerce.number().int().min(1).max(100_000).default(1)),
  pageSize: z.preprocess(blank, z.coerce.number().int().min(1).max(200).default(50)),
});

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const query = RetuneListQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listRetuneRequests(getDb(), caller.scope, query.data);
  });
}

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("GET", "POST");
    const caller = await requireApiCaller(request, params.slug, "retune:request");
    const body = await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    const input = RetuneCreateSchema.strict().safeParse(body.value);
    if (!input.success) return invalidBody(input.error);
    const created = await createRetuneRequest(getDb(), caller.scope, caller.actor, input.data);
    return jsonResponse(created, 201);
  });
}
