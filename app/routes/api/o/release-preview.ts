// POST /api/v1/o/:slug/releases/preview {gainSetId, target} → the machines and loops it reaches,
// with their current versions and gains. Changes nothing.
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { apiError, methodNotAllowed, readJsonBody, zodIssues } from "~/.server/http/json";
import { previewRelease } from "~/.server/releases/releases";
import { PreviewReleaseSchema } from "~/lib/release/schemas";
import type { Route } from "./+types/release-preview";

export const loader = () => methodNotAllowed("POST");

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const caller = await requireApiCaller(request, params.slug, "release:operate");
    const body = await readJsonBody(request, { limit: 256 * 1024 });
    if (!body.ok) return body.response;
    const input = PreviewReleaseSchema.safeParse(body.value);
    if (!input.success) return apiError(400, "invalid_body", "Check the target.", zodIssues(input.error));
    return previewRelease(getDb(), { organisationId: caller.scope.organisationId, ...input.data });
  });
}
