// POST /api/v1/device/enrol (DESIGN.md section 4).
import { admitEnrolment } from "~/.server/auth/attempt-limits";
import { getDb } from "~/.server/db/client";
import { EnrolmentRefused, enrolDevice } from "~/.server/device-auth/enrol";
import { apiError, jsonResponse, readJsonBody, zodIssues } from "~/.server/device-auth/http";
import { EnrolRequestSchema } from "~/.server/device-auth/schemas";
import type { Route } from "./+types/enrol";

export function loader() {
  return apiError(405, "method_not_allowed", "Use POST.", undefined, { allow: "POST" });
}

export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return loader();
  const wait = await admitEnrolment(request);
  if (wait) return apiError(429, "rate_limited", "Too many enrolment attempts from this address; retry later.", undefined, { "retry-after": String(wait.retryAfterS) });
  const body = await readJsonBody(request, 16 * 1024);
  if (!body.ok) return body.response;
  const parsed = EnrolRequestSchema.safeParse(body.value);
  if (!parsed.success) return apiError(400, "invalid_body", "The enrolment request is not valid.", zodIssues(parsed.error));
  try {
    return jsonResponse(await enrolDevice(getDb(), parsed.data), 201);
  } catch (error) {
    if (error instanceof EnrolmentRefused) return apiError(error.status, error.code, error.message);
    console.error(error);
    return apiError(500, "internal_error", "Something went wrong on our side.");
  }
}
