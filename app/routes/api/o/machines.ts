// GET /api/v1/o/:slug/machines?customerId=&siteId=&modelId=&health=&status=&q=&sort=&dir=&page=&pageSize=
// POST /api/v1/o/:slug/machines {serial, modelId, siteId, firmware?} → 201 {machine, enrolmentCode}
import { requireActiveSubscription } from "~/.server/billing/enforce";
import { requestQuantitySync } from "~/.server/billing/quantity";
import { getDb } from "~/.server/db/client";
import { apiError, jsonResponse, methodNotAllowed, readJsonBody, zodIssues } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { getMachine, listMachines, registerMachine } from "~/.server/fleet/machines";
import { MachineListQuerySchema, RegisterMachineSchema } from "~/lib/fleet/schemas";
import { searchParams } from "~/.server/fleet/query";
import type { Route } from "./+types/machines";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    const query = MachineListQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    return listMachines(getDb(), caller.scope, query.data);
  });
}

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("GET", "POST");
    const caller = await requireApiCaller(request, params.slug, "machines:manage");
    const body = await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    const input = RegisterMachineSchema.safeParse(body.value);
    if (!input.success) return apiError(400, "invalid_body", "Check the machine's fields.", zodIssues(input.error));
    await requireActiveSubscription(getDb(), caller.scope.organisationId, { adding: 1 });
    const created = await getDb().transaction((tx) => registerMachine(tx, { organisationId: caller.scope.organisationId, actor: caller.actor, input: input.data }));
    await requestQuantitySync(getDb(), { organisationId: caller.scope.organisationId });
    const machine = await getMachine(getDb(), caller.scope, created.machine.id);
    return jsonResponse({ machine, enrolmentCode: { code: created.enrolmentCode.code, expiresAt: created.enrolmentCode.expiresAt.toISOString() } }, 201);
  });
}
