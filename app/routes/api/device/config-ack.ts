// POST /api/v1/device/config/ack: the device applied (or refused) a loop's configuration.
import { acknowledgeConfig, AckRefused } from "~/.server/device-auth/config";
import { apiError, jsonResponse, readJsonBody, zodIssues } from "~/.server/device-auth/http";
import { AckRequestSchema } from "~/.server/device-auth/schemas";
import { takeDeviceToken } from "~/.server/device-auth/rate-limit";
import { admitDeviceToken, verifyDeviceToken } from "~/.server/device-auth/tokens";
import type { Route } from "./+types/config-ack";

export function loader() {
  return apiError(405, "method_not_allowed", "Use POST.", undefined, { allow: "POST" });
}

export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return loader();
  try {
    const token = await verifyDeviceToken(request);
    const wait = takeDeviceToken(token.deviceId);
    if (wait !== null) return apiError(429, "rate_limited", "Too many requests from this device; retry later.", undefined, { "retry-after": String(wait) });
    const ctx = await admitDeviceToken(token);
    const body = await readJsonBody(request, 8 * 1024);
    if (!body.ok) return body.response;
    const parsed = AckRequestSchema.safeParse(body.value);
    if (!parsed.success) return apiError(400, "invalid_body", "The acknowledgement is not valid.", zodIssues(parsed.error));
    return jsonResponse(await acknowledgeConfig(ctx, parsed.data));
  } catch (error) {
    if (error instanceof Response) return error;
    if (error instanceof AckRefused) return apiError(error.status, error.code, error.message);
    console.error(error);
    return apiError(500, "internal_error", "Something went wrong on our side.");
  }
}
