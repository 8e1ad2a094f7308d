// POST /api/v1/o/:slug/findings/acknowledge {ids: [...], comment?} → 200 {acknowledged: n}
// All or nothing: one id the caller cannot see (404) or an already resolved finding (409) changes nothing.
import { z } from "zod";
import { getDb } from "~/.server/db/client";
import { invalidBody, methodNotAllowed, readJsonBody } from "~/.server/http/json";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { acknowledgeFindings } from "~/.server/health/findings";
import type { Route } from "./+types/findings-acknowledge";

const BulkAcknowledgeSchema = z.object({ ids: z.array(z.string().uuid()).min(1).max(500), comment: z.string().trim().max(2000).optional() }).strict();

export const loader = () => methodNotAllowed("POST");

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const caller = await requireApiCaller(request, params.slug, "findings:triage");
    const body = await readJsonBody(request, { limit: 64 * 1024 });
    if (!body.ok) return body.response;
    const input = BulkAcknowledgeSchema.safeParse(body.value);
    if (!input.success) return invalidBody(input.error);
    return acknowledgeFindings(getDb(), caller.scope, caller.actor, input.data.ids, input.data.comment);
  });
}
