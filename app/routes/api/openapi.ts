// GET /api/v1/openapi.json: the device API's OpenAPI 3.1 document.
import { getDeviceApiDocument } from "~/.server/device-api/openapi";
import { jsonResponse } from "~/.server/http/json";

export function loader() {
  return jsonResponse(getDeviceApiDocument(), 200, { "cache-control": "public, max-age=300", "access-control-allow-origin": "*" });
}
