// Device authentication: a JWT signed with the device's own private
// key. Header alg on an allow-list (EdDSA, ES256; never none or HS*) and equal to the
// enrolled key's alg, kid = device id; claims iss = device id, aud = flyball-device, iat and
// exp at most 5 minutes apart, 60 s of clock skew, a jti that is never accepted twice.
//
// The public key of a device id never changes (re-enrolment makes a new device), so keys are
// cached per process. Whether the device is still active and the jti still unused is asked of
// PostgreSQL on every request, in a statement that also records the jti (shared by the
// requests that arrive together): revocation and replay refusal hold across restarts and
// across any number of app processes.
import { decodeProtectedHeader, importJWK, jwtVerify, errors as joseErrors, type CryptoKey } from "jose";
import { createBatcher } from "~/.server/db/batch";
import { getPool } from "~/.server/db/client";
import { apiError } from "~/.server/http/json";

export const DEVICE_AUDIENCE = "flyball-device";
export const ALLOWED_ALGS = ["EdDSA", "ES256"] as const;
export const MAX_TOKEN_LIFETIME_S = 300;
export const CLOCK_SKEW_S = 60;

export type DeviceContext = { organisationId: string; deviceId: string; machineId: string };
/**
 * With `withConfigState`, also a digest of the machine's configuration as of this request and
 * the organisation's active signing key id (so a rotation is seen at once, without a query).
 */
export type AuthenticatedDevice = DeviceContext & { configState: string | null; signingKid: string | null };

type CachedKey = { organisationId: string; machineId: string; alg: string; key: CryptoKey | Uint8Array };
const keyCache = new Map<string, CachedKey>();
const KEY_CACHE_LIMIT = 50_000;
/** Device ids asked for and not found, remembered briefly so made-up ids cost no query each. */
const unknownKids = new Map<string, number>();
const UNKNOWN_KID_TTL_MS = 60_000;
const UNKNOWN_KID_LIMIT = 10_000;

/** Token ids: URL-safe characters only, so none can upset a statement shared with other devices. */
export const JTI_PATTERN = /^[A-Za-z0-9._~-]{8,128}$/;

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
  const missedAt = unknownKids.get(deviceId);
  if (missedAt !== undefined && Date.now() - missedAt < UNKNOWN_KID_TTL_MS) return null;
  const result = await getPool().query<{ organisation_id: string; machine_id: string; alg: string; public_jwk: Record<string, string> }>({
    name: "device_key_by_id",
    text: "select organisation_id, machine_id, alg, public_jwk from device where id = $1",
    values: [deviceId],
  });
  const row = result.rows[0];
  if (!row) {
    if (unknownKids.size >= UNKNOWN_KID_LIMIT) unknownKids.clear();
    unknownKids.set(deviceId, Date.now());
    return null;
  }
  unknownKids.delete(deviceId);
  const key = await importJWK({ ...row.public_jwk, alg: row.alg }, row.alg);
  const entry = { organisationId: row.organisation_id, machineId: row.machine_id, alg: row.alg, key };
  if (keyCache.size >= KEY_CACHE_LIMIT) keyCache.clear();
  keyCache.set(deviceId, entry);
  return entry;
}

/**
 * The token checks of a batched statement, as CTEs after one named `request` that has a row per
 * request: (organisation_id, device_id, jti, expires_at, req). Whether each device is still
 * active and its machine in service, and whether each jti is new: `state` has every request
 * with its device's and machine's status, `passed` the requests that may go ahead, whose jtis
 * are now recorded (until the token would expire anyway). jtis go in key order so concurrent
 * batches never wait on each other in a cycle. last_seen_at moves at most every 10 s per
 * machine and skips rows another batch is updating. Used by GATE_SQL and by ingest.ts.
 */
export const TOKEN_CHECK_CTES = `state as (
  select r.*, d.machine_id, d.status as device_status, m.status as machine_status
  from request r
  left join device d on d.organisation_id = r.organisation_id and d.id = r.device_id
  left join machine m on m.organisation_id = d.organisation_id and m.id = d.machine_id
), fresh as (
  insert into device_jti (organisation_id, device_id, jti, expires_at)
  select organisation_id, device_id, jti, expires_at from state
  where device_status = 'active' and machine_status = 'active'
  order by organisation_id, device_id, jti
  on conflict do nothing
  returning device_id, jti
), passed as (
  select s.req, s.organisation_id, s.machine_id from state s join fresh f on f.device_id = s.device_id and f.jti = s.jti
), seen as (
  update machine set last_seen_at = now()
  where (organisation_id, id) in (
    select m.organisation_id, m.id from machine m
    where (m.organisation_id, m.id) in (select organisation_id, machine_id from passed)
      and (m.last_seen_at is null or m.last_seen_at < now() - interval '10 seconds')
    for update skip locked)
  returning 1
)`;

// The token checks of config pulls and acks (see ~/.server/db/batch), a batch at a time. A
// config pull also gets a digest of the machine's configuration state, which its ETag is made from.
const GATE_SQL = `
with request as (
  select * from unnest($1::text[], $2::uuid[], $3::text[], $4::timestamptz[], $5::bool[]) with ordinality
    as t(organisation_id, device_id, jti, expires_at, want_config, req)
), ${TOKEN_CHECK_CTES}
select s.req, s.device_status, s.machine_status, p.req is not null as fresh,
  case when s.want_config and p.req is not null then (
    select md5(string_agg(concat_ws('|', l.key, l.config_version, l.gain_set_id, l.gains::text, t.output_min, t.output_max, t.sample_period_s), ';' order by l.key))
    from loop l join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
    where l.organisation_id = s.organisation_id and l.machine_id = s.machine_id) end as config_state,
  case when s.want_config and p.req is not null then (
    select k.id::text from organisation_signing_key k where k.organisation_id = s.organisation_id and k.status = 'active') end as signing_kid
from state s left join passed p on p.req = s.req
order by s.req`;

type GateItem = VerifiedToken & { wantConfig: boolean };
type GateAnswer = TokenStanding & { config_state: string | null; signing_kid: string | null };

/**
 * Runs a batch in which a token may come more than once (a replay sent beside its first use):
 * `run` sees each token once, in the order of first use, and a repeat is answered with its
 * first use's standing, not fresh (`asRepeat`). Used by the gate and by ingest.ts.
 */
export async function runOncePerToken<I, O extends TokenStanding>(
  items: readonly I[],
  tokenOf: (item: I) => VerifiedToken,
  run: (firsts: I[]) => Promise<O[]>,
  asRepeat: (first: O) => O,
): Promise<O[]> {
  const firstAt = new Map<string, number>();
  const firsts: I[] = [];
  const slots = items.map((item) => {
    const { deviceId, jti } = tokenOf(item);
    const key = `${deviceId} ${jti}`;
    const at = firstAt.get(key);
    if (at !== undefined) return { at, repeat: true };
    firstAt.set(key, firsts.length);
    firsts.push(item);
    return { at: firsts.length - 1, repeat: false };
  });
  const answers = await run(firsts);
  return slots.map(({ at, repeat }) => (repeat ? asRepeat(answers[at]) : answers[at]));
}

async function queryGate(items: GateItem[]): Promise<GateAnswer[]> {
  const result = await getPool().query<GateAnswer & { req: string }>({
    name: "device_gate",
    text: GATE_SQL,
    values: [items.map((i) => i.organisationId), items.map((i) => i.deviceId), items.map((i) => i.jti), items.map((i) => i.expiresAt.toISOString()), items.map((i) => i.wantConfig)],
  });
  return result.rows;
}

const runGate = (items: readonly GateItem[]) => runOncePerToken(items, (item) => item, queryGate, (first) => ({ ...first, fresh: false, config_state: null, signing_kid: null }));

const gate = createBatcher(runGate, { maxInFlight: 2, maxBatchSize: 256 });

function bearer(request: Request): string {
  const header = request.headers.get("authorization");
  if (!header) throw new Refusal("missing_token");
  const match = /^Bearer ([A-Za-z0-9_-]+\.[A-Za-z0-9_-]*\.[A-Za-z0-9_-]*)$/.exec(header.trim());
  if (!match || match[1].length > 4096) throw new Refusal("malformed_token");
  return match[1];
}

/** A device token whose signature and claims hold; whether it may be used is not yet asked. */
export type VerifiedToken = DeviceContext & { jti: string; expiresAt: Date };

/** What PostgreSQL says of a token's device and jti (see GATE_SQL and ingest.ts). */
export type TokenStanding = { device_status: string | null; machine_status: string | null; fresh: boolean };

/** The reason to refuse a verified token, or null when it may be used. */
export function refusalOf(standing: TokenStanding): string | null {
  if (!standing.device_status) return "unknown_key";
  if (standing.device_status !== "active") return "device_revoked";
  if (standing.machine_status !== "active") return "machine_decommissioned";
  if (!standing.fresh) return "token_replayed";
  return null;
}

/**
 * Check the request's device token (signature, header and claims) without writing anything;
 * throws a 401 Response. The caller must then record the jti and check the device's standing,
 * with admitDeviceToken, or in the same statement as its own work (device-api/ingest.ts).
 */
export async function verifyDeviceToken(request: Request, now = new Date()): Promise<VerifiedToken> {
  try {
    return await verify(request, now);
  } catch (error) {
    if (error instanceof Refusal) throw deviceUnauthorized(error.reason);
    throw error;
  }
}

/** Record a verified token's jti and check the device's standing; throws a 401 Response when refused. */
export async function admitDeviceToken(token: VerifiedToken, { withConfigState = false }: { withConfigState?: boolean } = {}): Promise<AuthenticatedDevice> {
  const standing = await gate.run({ ...token, wantConfig: withConfigState });
  const refusal = refusalOf(standing);
  if (refusal) throw deviceUnauthorized(refusal);
  return { organisationId: token.organisationId, deviceId: token.deviceId, machineId: token.machineId, configState: standing.config_state, signingKid: standing.signing_kid };
}

async function verify(request: Request, now: Date): Promise<VerifiedToken> {
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
  if (typeof jti !== "string" || !JTI_PATTERN.test(jti)) throw new Refusal("bad_jti");
  // The jti is kept until the token would be refused as expired anyway.
  return { organisationId: key.organisationId, deviceId, machineId: key.machineId, jti, expiresAt: new Date((exp + CLOCK_SKEW_S) * 1000) };
}

/** Forget cached keys (tests, or after a device row is deleted). */
export function clearDeviceKeyCache(): void {
  keyCache.clear();
  unknownKids.clear();
}
