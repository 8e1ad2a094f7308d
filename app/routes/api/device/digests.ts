// POST /api/v1/device/digests: at most 500 digests and 256 KiB per call.
import { apiError, jsonResponse, payloadTooLarge, readJsonBody, zodIssues } from "~/.server/device-auth/http";
import { ingestDigests } from "~/.server/device-auth/ingest";
import { takeDeviceToken } from "~/.server/device-auth/rate-limit";
import { DigestBatchSchema, MAX_DIGEST_BODY_BYTES, MAX_DIGESTS_PER_BATCH } from "~/.server/device-auth/schemas";
import { admitDeviceToken, verifyDeviceToken } from "~/.server/device-auth/tokens";
import type { Route } from "./+types/digests";

export function loader() {
  return apiError(405, "method_not_allowed", "Use POST.", undefined, { allow: "POST" });
}

export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return loader();
  // Refuse what is declared too large before doing any work for it.
  const declared = Number(request.headers.get("content-length"));
  if (Number.isFinite(declared) && declared > MAX_DIGEST_BODY_BYTES) {
    return payloadTooLarge(`Send at most ${MAX_DIGEST_BODY_BYTES} bytes per call.`);
  }
  try {
    // The signature first; the jti and the device's standing are checked with the digests.
    const token = await verifyDeviceToken(request);
    const wait = takeDeviceToken(token.deviceId);
    if (wait !== null) return apiError(429, "rate_limited", "Too many requests from this device; retry later.", undefined, { "retry-after": String(wait) });
    // A body refused before the digests are stored still uses up the token (and a device that
    // may not post hears 401 rather than what is wrong with its body).
    const refuse = async (response: Response) => {
      await admitDeviceToken(token);
      return response;
    };
    const body = await readJsonBody(request, MAX_DIGEST_BODY_BYTES);
    if (!body.ok) return refuse(body.response);
    const digests = (body.value as { digests?: unknown } | null)?.digests;
    if (Array.isArray(digests) && digests.length > MAX_DIGESTS_PER_BATCH) {
      return refuse(payloadTooLarge(`Send at most ${MAX_DIGESTS_PER_BATCH} digests per call.`, "too_many_digests"));
    }
    const parsed = DigestBatchSchema.safeParse(body.value);
    if (!parsed.success) return refuse(apiError(400, "invalid_body", "Send {\"digests\": [...]} with 1 to 500 digests.", zodIssues(parsed.error)));
    return jsonResponse(await ingestDigests(token, parsed.data.digests));
  } catch (error) {
    if (error instanceof Response) return error;
    console.error(error);
    return apiError(500, "internal_error", "Something went wrong on our side.");
  }
}
