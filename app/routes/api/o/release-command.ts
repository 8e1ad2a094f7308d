// POST /api/v1/o/:slug/releases/:id/hold {reason?}   → 200 the release
// POST /api/v1/o/:slug/releases/:id/resume           → 200 the release
// POST /api/v1/o/:slug/releases/:id/rollback         → 200 the release
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { apiError, methodNotAllowed, readJsonBody, zodIssues } from "~/.server/http/json";
import { getRelease, holdRelease, resumeRelease, rollbackRelease } from "~/.server/releases/releases";
import { ReleaseCommandSchema } from "~/lib/release/schemas";
import type { Route } from "./+types/release-command";

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

export const loader = () => methodNotAllowed("POST");

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const caller = await requireApiCaller(request, params.slug, "release:operate");
    if (!["hold", "resume", "rollback"].includes(params.command)) return apiError(404, "not_found", "No such command.");
    if (!UUID.test(params.id)) return apiError(404, "not_found", "No such release.");
    const body = await readJsonBody(request, { limit: 16 * 1024 });
    if (!body.ok) return body.response;
    const input = ReleaseCommandSchema.safeParse(body.value ?? {});
    if (!input.success) return apiError(400, "invalid_body", "Check the fields.", zodIssues(input.error));
    const db = getDb();
    const ctx = { organisationId: caller.scope.organisationId, releaseId: params.id, actor: caller.actor };
    // Existence first, so another organisation's id is 404 whatever the command.
    await getRelease(db, ctx);
    if (params.command === "hold") {
      const who = caller.membership?.user.name ?? "an API token";
      await holdRelease(db, { ...ctx, reason: `Held by ${who}${input.data.reason ? `: ${input.data.reason}` : "."}` });
    } else if (params.command === "resume") await resumeRelease(db, ctx);
    else await rollbackRelease(db, ctx);
    return getRelease(db, ctx);
  });
}
