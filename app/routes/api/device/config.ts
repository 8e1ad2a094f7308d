// GET /api/v1/device/config: the signed configuration of this device's loops, 304 when unchanged.
import { getDeviceConfig } from "~/.server/device-auth/config";
import { apiError, jsonResponse } from "~/.server/device-auth/http";
import { authenticateDevice } from "~/.server/device-auth/tokens";
import type { Route } from "./+types/config";

export async function loader({ request }: Route.LoaderArgs) {
  try {
    const ctx = await authenticateDevice(request);
    const config = await getDeviceConfig(ctx, request.headers.get("if-none-match"));
    const headers = { etag: config.etag, "cache-control": "private, no-cache" };
    if (config.notModified) return new Response(null, { status: 304, headers });
    return jsonResponse(config.body, 200, headers);
  } catch (error) {
    if (error instanceof Response) return error;
    console.error(error);
    return apiError(500, "internal_error", "Something went wrong on our side.");
  }
}

export function action() {
  return apiError(405, "method_not_allowed", "Use GET.", undefined, { allow: "GET" });
}
