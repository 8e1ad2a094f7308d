// POST /api/v1/o/:slug/findings/:id/acknowledge {comment?} → 200 the finding
// POST /api/v1/o/:slug/findings/:id/resolve {comment}      → 200 the finding
// GET  /api/v1/o/:slug/findings/:id/series  → the metric per hour, threshold, tripping window (fleet:read)
// Acknowledge and resolve need findings:triage (viewers: 403); site managers only their sites (others: 404).
import { getDb } from "~/.server/db/client";
import { apiError, invalidBody, methodNotAllowed, readJsonBody } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { acknowledgeFinding, getFindingSeries, resolveFinding } from "~/.server/health/findings";
import { AcknowledgeSchema, ResolveSchema } from "~/lib/health/api-types";
import type { Route } from "./+types/finding-command";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    if (params.command !== "series") return methodNotAllowed("POST");
    const caller = await requireApiCaller(request, params.slug, "fleet:read");
    return getFindingSeries(getDb(), caller.scope, params.id);
  });
}

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    if (params.command !== "acknowledge" && params.command !== "resolve") return apiError(404, "not_found", "No such command.");
    const caller = await requireApiCaller(request, params.slug, "findings:triage");
    const body = await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    if (params.command === "acknowledge") {
      const input = AcknowledgeSchema.strict().safeParse(body.value ?? {});
      if (!input.success) return invalidBody(input.error);
      return acknowledgeFinding(getDb(), caller.scope, caller.actor, params.id, input.data.comment);
    }
    const input = ResolveSchema.strict().safeParse(body.value);
    if (!input.success) return invalidBody(input.error);
    return resolveFinding(getDb(), caller.scope, caller.actor, params.id, input.data.comment);
  });
}
