// POST /api/v1/o/:slug/gain-sets/:id/propose {override?: {reason}} → 200 {id, version, state, checks} | 422 checks_failed
// POST /api/v1/o/:slug/gain-sets/:id/approve {comment?}            → 200 {id, version, state} | 403 own_gain_set
// POST /api/v1/o/:slug/gain-sets/:id/reject  {comment}             → 200 {id, version, state}
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { apiError, invalidBody, methodNotAllowed, readJsonBody } from "~/.server/http/json";
import { approveGainSet, proposeGainSet, rejectGainSet } from "~/.server/tuning/gain-sets";
import { ApproveGainSetSchema, ProposeGainSetSchema, RejectGainSetSchema } from "~/lib/gain-sets/schemas";
import type { Route } from "./+types/gain-set-command";

export const loader = () => methodNotAllowed("POST");

const COMMANDS = {
  propose: { capability: "tuning:use", schema: ProposeGainSetSchema },
  approve: { capability: "gainset:approve", schema: ApproveGainSetSchema },
  reject: { capability: "gainset:approve", schema: RejectGainSetSchema },
} as const;

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const command = params.command as keyof typeof COMMANDS;
    if (!Object.hasOwn(COMMANDS, command)) return apiError(404, "not_found", "No such command.");
    const caller = await requireApiCaller(request, params.slug, COMMANDS[command].capability);
    // The bodies are all optional fields but a reject's comment: an empty body counts as {}.
    const body = request.headers.get("content-length") === "0" ? { ok: true as const, value: {} } : await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    const scope = { organisationId: caller.scope.organisationId, actor: caller.actor, id: params.id };
    switch (command) {
      case "propose": {
        const input = ProposeGainSetSchema.safeParse(body.value);
        if (!input.success) return invalidBody(input.error, "invalid_body");
        return proposeGainSet(getDb(), { ...scope, role: caller.membership?.role ?? null, override: input.data.override });
      }
      case "approve": {
        const input = ApproveGainSetSchema.safeParse(body.value);
        if (!input.success) return invalidBody(input.error, "invalid_body");
        return approveGainSet(getDb(), { ...scope, comment: input.data.comment ?? "" });
      }
      case "reject": {
        const input = RejectGainSetSchema.safeParse(body.value);
        if (!input.success) return invalidBody(input.error, "invalid_body");
        return rejectGainSet(getDb(), { ...scope, comment: input.data.comment });
      }
    }
  });
}
