// POST /api/v1/o/:slug/machines/import — multipart `file` + `mode`, or a text/csv body with
// ?mode=; mode is all-or-nothing | valid-rows | check. Answers
// {mode, outcome, rowCount, imported: [{row, serial, machineId, enrolmentCode, enrolmentCodeExpiresAt}],
//  rejected: [{row, serial?, code, message}], ready: [{row, serial, model, site}]}
// with 200, or 422 when all-or-nothing refused the file. Enrolment codes are in this answer only.
import { z } from "zod";
import { requireActiveSubscription } from "~/.server/billing/enforce";
import { requestQuantitySync } from "~/.server/billing/quantity";
import { getDb } from "~/.server/db/client";
import { apiError, jsonResponse, methodNotAllowed, payloadTooLarge } from "~/.server/http/json";
import { env } from "~/.server/env";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { handleApi } from "~/.server/http/errors";
import { importMachinesFromCsv, readImportUpload } from "~/.server/fleet/machine-import";
import { IMPORT_MODES } from "~/lib/fleet/machine-import";
import type { Route } from "./+types/machines-import";

const ModeSchema = z.enum(IMPORT_MODES, "mode: choose all-or-nothing, valid-rows or check.");

/**
 * requireApiCaller accepts cookie-signed writes only as JSON, because a cross-site form cannot
 * send JSON. A form can send multipart, so for a cookie caller this route insists on a
 * trusted Origin itself (text/csv, like JSON, cannot come from a cross-site form), then lets
 * the guard see the request's headers with the body type it expects.
 */
function refuseCrossSiteUpload(request: Request): Response | null {
  if (request.headers.get("authorization")?.startsWith("Bearer ")) return null;
  if (!/^multipart\/form-data\b/i.test(request.headers.get("content-type") ?? "")) return null;
  const settings = env();
  const trusted = [settings.BETTER_AUTH_URL, ...settings.TRUSTED_ORIGINS.split(",").map((o) => o.trim()).filter(Boolean)].map((o) => o.replace(/\/$/, ""));
  const origin = request.headers.get("origin")?.replace(/\/$/, "");
  if (!origin || !trusted.includes(origin)) return apiError(403, "bad_origin", "File uploads signed in with a session cookie must come from Flyball's own pages.");
  return null;
}

function guardView(request: Request): Request {
  const headers = new Headers(request.headers);
  headers.set("content-type", "application/json");
  headers.delete("content-length");
  return new Request(request.url, { method: request.method, headers });
}

export const loader = () => methodNotAllowed("POST");

export function action({ request, params }: Route.ActionArgs) {
  return handleApi(async () => {
    if (request.method !== "POST") return methodNotAllowed("POST");
    const type = request.headers.get("content-type") ?? "";
    if (!/^(multipart\/form-data|text\/csv)\b/i.test(type)) return apiError(415, "unsupported_media_type", "Send the CSV as multipart/form-data (a `file` field) or as a text/csv body.");
    const crossSite = refuseCrossSiteUpload(request);
    if (crossSite) return crossSite;
    const caller = await requireApiCaller(guardView(request), params.slug, "machines:manage");
    const upload = await readImportUpload(request);
    if (!upload.ok) return upload.status === 413 ? payloadTooLarge(upload.message) : apiError(upload.status, upload.code, upload.message);
    const mode = ModeSchema.safeParse(upload.mode);
    if (!mode.success) return apiError(400, "invalid_mode", "mode: choose all-or-nothing, valid-rows or check.", [{ path: ["mode"], message: "Choose all-or-nothing, valid-rows or check." }]);
    const organisationId = caller.scope.organisationId;
    const report = await importMachinesFromCsv(getDb(), { scope: caller.scope, actor: caller.actor, text: upload.text, mode: mode.data, beforeRegister: (adding) => requireActiveSubscription(getDb(), organisationId, { adding }) });
    if (report.imported.length > 0) await requestQuantitySync(getDb(), { organisationId });
    return jsonResponse(report, report.outcome === "refused" ? 422 : 200);
  });
}
