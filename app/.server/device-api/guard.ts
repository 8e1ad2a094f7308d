// The steps every authenticated device call takes, in this order: the token's signature and
// claims (no database, no body read yet), the device's request budget, then — with the
// route's own work or on its own — the jti and the device's standing in PostgreSQL.
import { takeDeviceToken } from "./rate-limit";
import { apiError } from "~/.server/http/json";
import { verifyDeviceToken, type VerifiedToken } from "~/.server/device-auth/tokens";

/** A verified token within its device's budget; throws the 401 or 429 answer. */
export async function requireDeviceToken(request: Request): Promise<VerifiedToken> {
  const token = await verifyDeviceToken(request);
  const wait = takeDeviceToken(token.deviceId);
  if (wait !== null) throw apiError(429, "rate_limited", "Too many requests from this device; retry later.", undefined, { "retry-after": String(wait) });
  return token;
}
