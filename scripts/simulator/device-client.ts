// A device's side of the device API, as firmware would do it: its own key pair, enrolment,
// short-lived signed tokens with a fresh jti per call. Used by the fleet simulator, the
// ingest bench and the integration tests.
import { randomUUID } from "node:crypto";
import { exampleDigestFields } from "~/lib/health/digest-fields";
import { exportJWK, generateKeyPair, importJWK, SignJWT, type CryptoKey, type JWK } from "jose";

export type DeviceAlg = "EdDSA" | "ES256";

export type DeviceIdentity = {
  alg: DeviceAlg;
  privateJwk: JWK;
  publicJwk: JWK;
  deviceId?: string;
  machineId?: string;
  loopKeys?: string[];
};

export async function createDeviceIdentity(alg: DeviceAlg = "EdDSA"): Promise<DeviceIdentity> {
  const { publicKey, privateKey } = await generateKeyPair(alg, alg === "EdDSA" ? { crv: "Ed25519", extractable: true } : { extractable: true });
  return { alg, privateJwk: await exportJWK(privateKey), publicJwk: await exportJWK(publicKey) };
}

export class DeviceClient {
  private key: Promise<CryptoKey | Uint8Array>;

  constructor(
    readonly baseUrl: string,
    readonly identity: DeviceIdentity,
  ) {
    this.key = importJWK(identity.privateJwk, identity.alg);
  }

  get deviceId(): string {
    if (!this.identity.deviceId) throw new Error("device is not enrolled");
    return this.identity.deviceId;
  }

  async enrol(enrolmentCode: string, firmware?: string): Promise<Response> {
    const response = await this.fetch("/api/v1/device/enrol", {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ enrolmentCode, publicKey: this.identity.publicJwk, firmware }),
    });
    if (response.status === 201) {
      const body = (await response.clone().json()) as { deviceId: string; machineId: string; loopKeys: string[] };
      this.identity.deviceId = body.deviceId;
      this.identity.machineId = body.machineId;
      this.identity.loopKeys = body.loopKeys;
    }
    return response;
  }

  /** A token with the claims the device API asks for; `overrides` lets tests forge. */
  async token(overrides: { lifetime?: number; iat?: number; aud?: string; iss?: string; jti?: string; kid?: string } = {}): Promise<string> {
    const iat = overrides.iat ?? Math.floor(Date.now() / 1000);
    return new SignJWT({})
      .setProtectedHeader({ alg: this.identity.alg, kid: overrides.kid ?? this.deviceId, typ: "JWT" })
      .setIssuer(overrides.iss ?? this.deviceId)
      .setAudience(overrides.aud ?? "flyball-device")
      .setIssuedAt(iat)
      .setExpirationTime(iat + (overrides.lifetime ?? 120))
      .setJti(overrides.jti ?? randomUUID())
      .sign(await this.key);
  }

  async postDigests(digests: unknown[], token?: string): Promise<Response> {
    return this.fetch("/api/v1/device/digests", {
      method: "POST",
      headers: { "content-type": "application/json", authorization: `Bearer ${token ?? (await this.token())}` },
      body: JSON.stringify({ digests }),
    });
  }

  async getConfig(etag?: string, token?: string): Promise<Response> {
    return this.fetch("/api/v1/device/config", {
      headers: { authorization: `Bearer ${token ?? (await this.token())}`, ...(etag ? { "if-none-match": etag } : {}) },
    });
  }

  async ack(body: { loop: string; version: number; status: "applied" | "rejected"; reason?: string }, token?: string): Promise<Response> {
    return this.fetch("/api/v1/device/config/ack", {
      method: "POST",
      headers: { "content-type": "application/json", authorization: `Bearer ${token ?? (await this.token())}` },
      body: JSON.stringify(body),
    });
  }

  fetch(path: string, init: RequestInit = {}): Promise<Response> {
    // Node's fetch keeps connections alive by default.
    return fetch(`${this.baseUrl}${path}`, init);
  }
}

/** A plausible digest for tests and benches. */
export function sampleDigest(loop: string, seq: number, start: Date, seconds = 60, over: Record<string, unknown> = {}) {
  return {
    loop,
    seq,
    windowStart: start.toISOString(),
    windowEnd: new Date(start.getTime() + seconds * 1000).toISOString(),
    ...exampleDigestFields(seconds),
    ...over,
  };
}
