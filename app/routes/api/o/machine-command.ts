// POST /api/v1/o/:slug/machines/:id/enrolment-code   → 201 {enrolmentCode: {code, expiresAt}}
// POST /api/v1/o/:slug/machines/:id/revoke-device    → 200 {revoked}
// POST /api/v1/o/:slug/machines/:id/decommission     → 200 {changed}
import { requestQuantitySync } from "~/.server/billing/quantity";
import { getDb } from "~/.server/db/client";
import { apiError, jsonResponse, methodNotAllowed } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { decommissionMachine, regenerateEnrolmentCode, revokeMachineDevice } from "~/.server/fleet/machines";
import type { Route } from "./+types/machine-command";

export const loader = () => methodNotAllowed("POST");

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const caller = await requireApiCaller(request, params.slug, "machines:manage");
    const input = { machineId: params.id, actor: caller.actor };
    switch (params.command) {
      case "enrolment-code": {
        const code = await regenerateEnrolmentCode(getDb(), caller.scope, input);
        return jsonResponse({ enrolmentCode: { code: code.code, expiresAt: code.expiresAt.toISOString() } }, 201);
      }
      case "revoke-device":
        return revokeMachineDevice(getDb(), caller.scope, input);
      case "decommission": {
        const result = await decommissionMachine(getDb(), caller.scope, input);
        if (result.changed) await requestQuantitySync(getDb(), { organisationId: caller.scope.organisationId });
        return result;
      }
      default:
        return apiError(404, "not_found", "No such command.");
    }
  });
}
