// GET /api/v1/openapi.json: the device API's OpenAPI 3.1 document.
import { getDeviceApiDocument } from "~/.server/device-auth/openapi";
import { jsonResponse } from "~/.server/device-auth/http";

export function loader() {
  return jsonResponse(getDeviceApiDocument(), 200, { "cache-control": "public, max-age=300", "access-control-allow-origin": "*" });
}
