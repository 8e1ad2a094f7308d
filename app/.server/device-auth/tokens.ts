// Device authentication (DESIGN.md section 4): a JWT signed with the device's own private
// key. Header alg on an allow-list (EdDSA, ES256; never none or HS*) and equal to the
// enrolled key's alg, kid = device id; claims iss = device id, aud = flyball-device, iat and
// exp at most 5 minutes apart, 60 s of clock skew, a jti that is never accepted twice.
//
// The public key of a device id never changes (re-enrolment makes a new device), so keys are
// cached per process. Whether the device is still active and the jti still unused is asked of
// PostgreSQL on every request, in one statement that also records the jti: revocation and
// replay refusal hold across restarts and across any number of app processes.
import { decodeProtectedHeader, importJWK, jwtVerify, errors as joseErrors, type CryptoKey } from "jose";
import { getPool } from "~/.server/db/client";
import { apiError } from "./http";

export const DEVICE_AUDIENCE = "flyball-device";
export const ALLOWED_ALGS = ["EdDSA", "ES256"] as const;
export const MAX_TOKEN_LIFETIME_S = 300;
export const CLOCK_SKEW_S = 60;

export type DeviceContext = { organisationId: string; deviceId: string; machineId: string };

type CachedKey = { organisationId: string; machineId: string; alg: string; key: CryptoKey | Uint8Array };
const keyCache = new Map<string, CachedKey>();
const KEY_CACHE_LIMIT = 50_000;

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/;

/** The one answer for every refusal: a reason code, nothing an attacker could use. */
export function deviceUnauthorized(reason: string): Response {
  return apiError(401, reason, "The device could not be authenticated.", undefined, { "www-authenticate": `Bearer error="invalid_token"` });
}

class Refusal extends Error {
  constructor(readonly reason: string) {
    super(reason);
  }
}

async function loadKey(deviceId: string): Promise<CachedKey | null> {
  const cached = keyCache.get(deviceId);
  if (cached) return cached;
  const result = await getPool().query<{ organisation_id: string; machine_id: string; alg: string; public_jwk: Record<string, string> }>({
    name: "device_key_by_id",
    text: "select organisation_id, machine_id, alg, public_jwk from device where id = $1",
    values: [deviceId],
  });
  const row = result.rows[0];
  if (!row) return null;
  const key = await importJWK({ ...row.public_jwk, alg: row.alg }, row.alg);
  const entry = { organisationId: row.organisation_id, machineId: row.machine_id, alg: row.alg, key };
  if (keyCache.size >= KEY_CACHE_LIMIT) keyCache.clear();
  keyCache.set(deviceId, entry);
  return entry;
}

// One round trip: is the device active and its machine in service, and is this jti new?
// Records the jti (until the token would expire anyway) and, at most every 10 s, last_seen_at.
const CHECK_SQL = `
with d as (
  select d.organisation_id, d.id, d.machine_id, d.status as device_status, m.status as machine_status
  from device d join machine m on m.organisation_id = d.organisation_id and m.id = d.machine_id
  where d.organisation_id = $1 and d.id = $2
), ins as (
  insert into device_jti (organisation_id, device_id, jti, expires_at)
  select organisation_id, id, $3, $4 from d where device_status = 'active' and machine_status = 'active'
  on conflict do nothing returning 1
), seen as (
  update machine set last_seen_at = now()
  where organisation_id = $1 and id = (select machine_id from d) and exists (select 1 from ins)
    and (last_seen_at is null or last_seen_at < now() - interval '10 seconds')
  returning 1
)
select (select device_status from d) as device_status, (select machine_status from d) as machine_status,
       exists (select 1 from ins) as fresh, (select count(*) from seen) as seen`;

function bearer(request: Request): string {
  const header = request.headers.get("authorization");
  if (!header) throw new Refusal("missing_token");
  const match = /^Bearer ([A-Za-z0-9_-]+\.[A-Za-z0-9_-]*\.[A-Za-z0-9_-]*)$/.exec(header.trim());
  if (!match || match[1].length > 4096) throw new Refusal("malformed_token");
  return match[1];
}

/** Verify the request's device token; answers the device, or throws a 401 Response. */
export async function authenticateDevice(request: Request, now: Date = new Date()): Promise<DeviceContext> {
  try {
    return await verify(request, now);
  } catch (error) {
    if (error instanceof Refusal) throw deviceUnauthorized(error.reason);
    throw error;
  }
}

async function verify(request: Request, now: Date): Promise<DeviceContext> {
  const token = bearer(request);
  let header: ReturnType<typeof decodeProtectedHeader>;
  try {
    header = decodeProtectedHeader(token);
  } catch {
    throw new Refusal("malformed_token");
  }
  if (typeof header.alg !== "string" || !(ALLOWED_ALGS as readonly string[]).includes(header.alg)) throw new Refusal("unsupported_alg");
  if (header.crit !== undefined) throw new Refusal("malformed_token");
  if (typeof header.kid !== "string" || !UUID.test(header.kid)) throw new Refusal("unknown_key");
  const deviceId = header.kid;
  const key = await loadKey(deviceId);
  if (!key) throw new Refusal("unknown_key");
  if (header.alg !== key.alg) throw new Refusal("unsupported_alg");

  let payload: Awaited<ReturnType<typeof jwtVerify>>["payload"];
  try {
    ({ payload } = await jwtVerify(token, key.key, {
      algorithms: [key.alg],
      audience: DEVICE_AUDIENCE,
      issuer: deviceId,
      clockTolerance: CLOCK_SKEW_S,
      requiredClaims: ["iss", "aud", "iat", "exp", "jti"],
      currentDate: now,
    }));
  } catch (error) {
    if (error instanceof joseErrors.JWTExpired) throw new Refusal("token_expired");
    if (error instanceof joseErrors.JWTClaimValidationFailed) {
      if (error.claim === "aud") throw new Refusal("wrong_audience");
      if (error.claim === "iss") throw new Refusal("wrong_issuer");
      if (error.claim === "nbf" || error.claim === "iat") throw new Refusal("token_not_yet_valid");
      throw new Refusal("missing_claim");
    }
    if (error instanceof joseErrors.JWSSignatureVerificationFailed) throw new Refusal("bad_signature");
    if (error instanceof joseErrors.JOSEAlgNotAllowed) throw new Refusal("unsupported_alg");
    throw new Refusal("malformed_token");
  }
  const nowS = Math.floor(now.getTime() / 1000);
  const iat = payload.iat!;
  const exp = payload.exp!;
  if (!Number.isInteger(iat) || !Number.isInteger(exp)) throw new Refusal("malformed_token");
  if (iat > nowS + CLOCK_SKEW_S) throw new Refusal("token_not_yet_valid");
  if (exp - iat > MAX_TOKEN_LIFETIME_S) throw new Refusal("token_lifetime_too_long");
  if (exp <= iat) throw new Refusal("token_expired");
  const jti = payload.jti;
  if (typeof jti !== "string" || jti.length < 8 || jti.length > 128) throw new Refusal("bad_jti");

  const result = await getPool().query<{ device_status: string | null; machine_status: string | null; fresh: boolean }>({
    name: "device_token_check",
    text: CHECK_SQL,
    values: [key.organisationId, deviceId, jti, new Date((exp + CLOCK_SKEW_S) * 1000)],
  });
  const row = result.rows[0];
  if (!row?.device_status) throw new Refusal("unknown_key");
  if (row.device_status !== "active") throw new Refusal("device_revoked");
  if (row.machine_status !== "active") throw new Refusal("machine_decommissioned");
  if (!row.fresh) throw new Refusal("token_replayed");
  return { organisationId: key.organisationId, deviceId, machineId: key.machineId };
}

/** Forget cached keys (tests, or after a device row is deleted). */
export function clearDeviceKeyCache(): void {
  keyCache.clear();
}
