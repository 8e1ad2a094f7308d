// POST /api/v1/device/enrol: a one-time code and the device's public key make a device.
import { admitEnrolment } from "~/.server/auth/attempt-limits";
import { getDb } from "~/.server/db/client";
import { enrolDevice } from "~/.server/device-auth/enrol";
import { DEVICE_API_PATHS, DEVICE_BODY_LIMITS } from "~/.server/device-api/limits";
import { EnrolRequestSchema } from "~/.server/device-api/schemas";
import { handleApi } from "~/.server/http/errors";
import { apiError, invalidBody, jsonResponse, methodNotAllowed, readJsonBody } from "~/.server/http/json";
import type { Route } from "./+types/enrol";

export function loader() {
  return methodNotAllowed("POST");
}

export function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed("POST");
  return handleApi(async () => {
    const wait = await admitEnrolment(request);
    if (wait) return apiError(429, "rate_limited", "Too many enrolment attempts from this address; retry later.", undefined, { "retry-after": String(wait.retryAfterS) });
    const body = await readJsonBody(request, { limit: DEVICE_BODY_LIMITS[DEVICE_API_PATHS.enrol] });
    if (!body.ok) return body.response;
    const parsed = EnrolRequestSchema.safeParse(body.value);
    if (!parsed.success) return invalidBody(parsed.error, "invalid_body", "The enrolment request is not valid.");
    return jsonResponse(await enrolDevice(getDb(), parsed.data), 201);
  });
}
