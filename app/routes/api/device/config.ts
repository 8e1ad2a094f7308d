// GET /api/v1/device/config: the signed configuration of this device's loops (a compact JWS,
// application/jose), 304 when unchanged.
import { admitDeviceToken } from "~/.server/device-auth/tokens";
import { getDeviceConfig } from "~/.server/device-api/config";
import { requireDeviceToken } from "~/.server/device-api/guard";
import { handleApi } from "~/.server/http/errors";
import { jsonResponse, methodNotAllowed } from "~/.server/http/json";
import type { Route } from "./+types/config";

export function loader({ request }: Route.LoaderArgs) {
  return handleApi(async () => {
    const ctx = await admitDeviceToken(await requireDeviceToken(request), { withConfigState: true });
    const config = await getDeviceConfig(ctx, request.headers.get("if-none-match"));
    const headers = { etag: config.etag, "cache-control": "private, no-cache", vary: "accept" };
    if (config.notModified) return new Response(null, { status: 304, headers });
    // The body is the compact JWS itself. A client that asks for JSON only gets it wrapped with
    // its expiry and the JWKS address.
    const accept = request.headers.get("accept") ?? "";
    if (/application\/json/i.test(accept) && !/application\/jose/i.test(accept)) return jsonResponse(config.body, 200, headers);
    return new Response(config.body.jws, {
      status: 200,
      headers: { ...headers, "content-type": "application/jose", expires: new Date(config.body.expiresAt).toUTCString(), link: `<${config.body.jwksUrl}>; rel="jwks"` },
    });
  });
}

export function action() {
  return methodNotAllowed("GET");
}
