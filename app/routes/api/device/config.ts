// GET /api/v1/device/config: the signed configuration of this device's loops (a compact JWS,
// application/jose), 304 when unchanged.
import { getDeviceConfig } from "~/.server/device-auth/config";
import { apiError, jsonResponse } from "~/.server/device-auth/http";
import { takeDeviceToken } from "~/.server/device-auth/rate-limit";
import { admitDeviceToken, verifyDeviceToken } from "~/.server/device-auth/tokens";
import type { Route } from "./+types/config";

export async function loader({ request }: Route.LoaderArgs) {
  try {
    const token = await verifyDeviceToken(request);
    const wait = takeDeviceToken(token.deviceId);
    if (wait !== null) return apiError(429, "rate_limited", "Too many requests from this device; retry later.", undefined, { "retry-after": String(wait) });
    const ctx = await admitDeviceToken(token, { withConfigState: true });
    const config = await getDeviceConfig(ctx, request.headers.get("if-none-match"));
    const headers = { etag: config.etag, "cache-control": "private, no-cache", vary: "accept" };
    if (config.notModified) return new Response(null, { status: 304, headers });
    // The body is the compact JWS itself (DESIGN.md section 4). A client that asks for JSON
    // only gets it wrapped with its expiry and the JWKS address.
    const accept = request.headers.get("accept") ?? "";
    if (/application\/json/i.test(accept) && !/application\/jose/i.test(accept)) return jsonResponse(config.body, 200, headers);
    return new Response(config.body.jws, {
      status: 200,
      headers: { ...headers, "content-type": "application/jose", expires: new Date(config.body.expiresAt).toUTCString(), link: `<${config.body.jwksUrl}>; rel="jwks"` },
    });
  } catch (error) {
    if (error instanceof Response) return error;
    console.error(error);
    return apiError(500, "internal_error", "Something went wrong on our side.");
  }
}

export function action() {
  return apiError(405, "method_not_allowed", "Use GET.", undefined, { allow: "GET" });
}
