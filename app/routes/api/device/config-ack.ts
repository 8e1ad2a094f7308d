// POST /api/v1/device/config/ack: the device applied (or refused) a loop's configuration.
import { admitDeviceToken } from "~/.server/device-auth/tokens";
import { acknowledgeConfig } from "~/.server/device-api/config";
import { requireDeviceToken } from "~/.server/device-api/guard";
import { DEVICE_API_PATHS, DEVICE_BODY_LIMITS } from "~/.server/device-api/limits";
import { AckRequestSchema } from "~/.server/device-api/schemas";
import { handleApi } from "~/.server/http/errors";
import { invalidBody, methodNotAllowed, readJsonBody } from "~/.server/http/json";
import type { Route } from "./+types/config-ack";

export function loader() {
  return methodNotAllowed("POST");
}

export function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed("POST");
  return handleApi(async () => {
    const ctx = await admitDeviceToken(await requireDeviceToken(request));
    const body = await readJsonBody(request, { limit: DEVICE_BODY_LIMITS[DEVICE_API_PATHS.ack] });
    if (!body.ok) return body.response;
    const parsed = AckRequestSchema.safeParse(body.value);
    if (!parsed.success) return invalidBody(parsed.error, "invalid_body", "The acknowledgement is not valid.");
    return acknowledgeConfig(ctx, parsed.data);
  });
}
