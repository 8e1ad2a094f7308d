// POST /api/v1/device/digests: at most 500 digests and 256 KiB per call.
import { admitDeviceToken } from "~/.server/device-auth/tokens";
import { requireDeviceToken } from "~/.server/device-api/guard";
import { ingestDigests } from "~/.server/device-api/ingest";
import { DEVICE_API_PATHS, DEVICE_BODY_LIMITS, MAX_DIGESTS_PER_BATCH } from "~/.server/device-api/limits";
import { DigestBatchSchema } from "~/.server/device-api/schemas";
import { handleApi } from "~/.server/http/errors";
import { invalidBody, methodNotAllowed, payloadTooLarge, readJsonBody } from "~/.server/http/json";
import type { Route } from "./+types/digests";

const LIMIT = DEVICE_BODY_LIMITS[DEVICE_API_PATHS.digests];

export function loader() {
  return methodNotAllowed("POST");
}

export function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed("POST");
  return handleApi(async () => {
    // Refuse what is declared too large before doing any work for it.
    const declared = Number(request.headers.get("content-length"));
    if (Number.isFinite(declared) && declared > LIMIT) return payloadTooLarge(`Send at most ${LIMIT} bytes per call.`);
    // The signature first; the jti and the device's standing are checked with the digests.
    const token = await requireDeviceToken(request);
    // A body refused before the digests are stored still uses up the token (and a device that
    // may not post hears 401 rather than what is wrong with its body).
    const refuse = async (response: Response) => {
      await admitDeviceToken(token);
      return response;
    };
    const body = await readJsonBody(request, { limit: LIMIT, tooLarge: () => payloadTooLarge(`Send at most ${LIMIT} bytes per call.`) });
    if (!body.ok) return refuse(body.response);
    const digests = (body.value as { digests?: unknown } | null)?.digests;
    if (Array.isArray(digests) && digests.length > MAX_DIGESTS_PER_BATCH) {
      return refuse(payloadTooLarge(`Send at most ${MAX_DIGESTS_PER_BATCH} digests per call.`, "too_many_digests"));
    }
    const parsed = DigestBatchSchema.safeParse(body.value);
    if (!parsed.success) return refuse(invalidBody(parsed.error, "invalid_body", 'Send {"digests": [...]} with 1 to 500 digests.'));
    return ingestDigests(token, parsed.data.digests);
  });
}
