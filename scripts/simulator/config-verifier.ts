// What firmware does with a configuration before it touches a loop: verify the JWS against
// the organisation's JWKS pinned at enrolment (signature, issuer, audience, expiry, type),
// then decide per loop — apply a higher version, keep the same one, refuse a lower one.
//
// Pinning: the device keeps the JWKS address it learnt at enrolment (its organisation's
// `/api/v1/o/:slug/jwks.json` on the server it enrolled with) and the keys fetched from it.
// A configuration signed with a kid it does not know makes it fetch that same address again
// (signing keys rotate; DEVELOPERS.md "Releases"), never an address named by the
// configuration itself; a kid still unknown after that is refused.
import { createLocalJWKSet, decodeProtectedHeader, errors as joseErrors, jwtVerify, type JSONWebKeySet } from "jose";

export type PinnedJwks = { jwksUrl: string; issuer: string; keys: JSONWebKeySet };

export type ConfigLoop = {
  key: string;
  version: number;
  gainSetId: string | null;
  form: "parallel";
  gains: { kp: number; ki: number; kd: number };
  filterN: number | null;
  setpointWeight: number;
  antiWindup: "clamp" | "back_calculation";
  trackingTime?: number | null;
  integratorMin?: number | null;
  integratorMax?: number | null;
  outputMin: number;
  outputMax: number;
  samplePeriod: number;
};

export type VerifiedConfig = { iss: string; aud: string; exp: number; iat: number; loops: ConfigLoop[] };

export class ConfigRefused extends Error {
  constructor(
    readonly code: "bad_signature" | "unknown_key" | "wrong_issuer" | "wrong_audience" | "expired" | "malformed",
    message: string,
  ) {
    super(message);
  }
}

/** The issuer a configuration from this JWKS address must carry: `flyball:<slug>`. */
export function issuerForJwksUrl(jwksUrl: string): string {
  const m = /\/api\/v1\/o\/([a-z0-9-]+)\/jwks\.json$/.exec(new URL(jwksUrl).pathname);
  if (!m) throw new Error(`not an organisation JWKS address: ${jwksUrl}`);
  return `flyball:${m[1]}`;
}

/** Fetch the JWKS at enrolment and pin it with its address. */
export async function pinJwks(jwksUrl: string, fetchJson: (url: string) => Promise<unknown> = defaultFetchJson): Promise<PinnedJwks> {
  const keys = (await fetchJson(jwksUrl)) as JSONWebKeySet;
  if (!keys || !Array.isArray(keys.keys)) throw new Error(`no JWKS at ${jwksUrl}`);
  return { jwksUrl, issuer: issuerForJwksUrl(jwksUrl), keys };
}

async function defaultFetchJson(url: string): Promise<unknown> {
  const response = await fetch(url);
  if (!response.ok) throw new Error(`JWKS fetch ${url}: ${response.status}`);
  return response.json();
}

/**
 * Verify a compact JWS configuration for `deviceId`. When its kid is not among the pinned keys,
 * the pinned address is fetched again once (the answer replaces the pinned keys in `pin`).
 */
export async function verifyConfig(
  jws: string,
  pin: PinnedJwks,
  deviceId: string,
  options: { now?: Date; fetchJson?: (url: string) => Promise<unknown> } = {},
): Promise<VerifiedConfig> {
  let kid: string | undefined;
  try {
    kid = decodeProtectedHeader(jws).kid;
  } catch {
    throw new ConfigRefused("malformed", "not a compact JWS");
  }
  if (!kid) throw new ConfigRefused("malformed", "the configuration names no signing key (kid)");
  if (!pin.keys.keys.some((k) => k.kid === kid)) {
    const fresh = await pinJwks(pin.jwksUrl, options.fetchJson);
    pin.keys = fresh.keys;
    if (!pin.keys.keys.some((k) => k.kid === kid)) throw new ConfigRefused("unknown_key", `signing key ${kid} is not in the organisation's JWKS`);
  }
  try {
    const { payload } = await jwtVerify(jws, createLocalJWKSet(pin.keys), {
      algorithms: ["EdDSA"],
      issuer: pin.issuer,
      audience: deviceId,
      typ: "flyball-config+jwt",
      requiredClaims: ["exp", "iat"],
      currentDate: options.now,
      clockTolerance: 60,
    });
    if (!Array.isArray(payload.loops)) throw new ConfigRefused("malformed", "the configuration has no loops");
    return payload as unknown as VerifiedConfig;
  } catch (error) {
    if (error instanceof ConfigRefused) throw error;
    if (error instanceof joseErrors.JWTExpired) throw new ConfigRefused("expired", "the configuration has expired");
    if (error instanceof joseErrors.JWTClaimValidationFailed) {
      if (error.claim === "iss") throw new ConfigRefused("wrong_issuer", `issued by ${String((error.payload as { iss?: unknown }).iss)}, not ${pin.issuer}`);
      if (error.claim === "aud") throw new ConfigRefused("wrong_audience", "addressed to another device");
      throw new ConfigRefused("malformed", error.message);
    }
    if (error instanceof joseErrors.JWSSignatureVerificationFailed) throw new ConfigRefused("bad_signature", "the signature does not verify");
    throw new ConfigRefused("malformed", (error as Error).message);
  }
}

export type LoopDecision =
  | { key: string; action: "apply"; loop: ConfigLoop }
  | { key: string; action: "keep"; version: number }
  | { key: string; action: "refuse"; version: number; reason: string };

/**
 * Per loop: apply a version higher than the one applied, keep the same, refuse a lower one
 * (firmware never goes back to an older version; a rollback arrives as a new, higher one).
 */
export function decideLoops(config: VerifiedConfig, applied: ReadonlyMap<string, number>): LoopDecision[] {
  return config.loops.map((loop) => {
    const current = applied.get(loop.key) ?? 0;
    if (loop.version > current) return { key: loop.key, action: "apply", loop };
    if (loop.version === current) return { key: loop.key, action: "keep", version: current };
    return { key: loop.key, action: "refuse", version: loop.version, reason: `version ${loop.version} is lower than the applied version ${current}` };
  });
}
