import { exportJWK, generateKeyPair, SignJWT, type JSONWebKeySet } from "jose";
import { beforeAll, describe, expect, it } from "vitest";
import { ConfigRefused, decideLoops, issuerForJwksUrl, pinJwks, verifyConfig, type ConfigLoop, type PinnedJwks } from "./config-verifier";

const JWKS_URL = "http://127.0.0.1:9/api/v1/o/corvid/jwks.json";
const DEVICE = "0b7e1f0e-1111-4222-8333-444455556666";

type Key = { kid: string; privateKey: CryptoKey; jwk: Record<string, unknown> };
async function makeKey(kid: string): Promise<Key> {
  const { publicKey, privateKey } = await generateKeyPair("EdDSA", { crv: "Ed25519", extractable: true });
  return { kid, privateKey: privateKey as CryptoKey, jwk: { ...(await exportJWK(publicKey)), kid, alg: "EdDSA", use: "sig" } };
}

const loop = (key: string, version: number): ConfigLoop => ({ key, version, gainSetId: null, form: "parallel", gains: { kp: 1, ki: 0.1, kd: 0 }, filterN: null, setpointWeight: 1, antiWindup: "clamp", outputMin: 0, outputMax: 100, samplePeriod: 0.1 });

async function sign(key: Key, over: { iss?: string; aud?: string; iat?: number; exp?: number; typ?: string; loops?: ConfigLoop[] } = {}) {
  const iat = over.iat ?? Math.floor(Date.now() / 1000);
  return new SignJWT({ loops: over.loops ?? [loop("temp", 3)] })
    .setProtectedHeader({ alg: "EdDSA", kid: key.kid, typ: over.typ ?? "flyball-config+jwt" })
    .setIssuer(over.iss ?? "flyball:corvid")
    .setAudience(over.aud ?? DEVICE)
    .setIssuedAt(iat)
    .setExpirationTime(over.exp ?? iat + 3600)
    .sign(key.privateKey);
}

let current: Key;
let rotated: Key;
let stranger: Key;
let served: JSONWebKeySet;
const fetchJson = async (url: string) => {
  expect(url).toBe(JWKS_URL); // only ever the pinned address
  return served;
};
let pin: PinnedJwks;

beforeAll(async () => {
  current = await makeKey("k1");
  rotated = await makeKey("k2");
  stranger = await makeKey("k1"); // same kid, other key: a forgery
  served = { keys: [current.jwk as never] };
  pin = await pinJwks(JWKS_URL, fetchJson);
});

async function refusal(promise: Promise<unknown>): Promise<string> {
  try {
    await promise;
  } catch (error) {
    expect(error).toBeInstanceOf(ConfigRefused);
    return (error as ConfigRefused).code;
  }
  throw new Error("accepted");
}

describe("verifyConfig", () => {
  it("pins issuer from the JWKS address", () => {
    expect(pin.issuer).toBe("flyball:corvid");
    expect(issuerForJwksUrl("https://x.example/api/v1/o/pellworth/jwks.json")).toBe("flyball:pellworth");
  });

  it("accepts a configuration signed by the organisation for this device", async () => {
    const config = await verifyConfig(await sign(current), pin, DEVICE, { fetchJson });
    expect(config.loops[0]).toMatchObject({ key: "temp", version: 3 });
  });

  it("refuses a forged signature (right kid, wrong key)", async () => {
    expect(await refusal(verifyConfig(await sign(stranger), pin, DEVICE, { fetchJson }))).toBe("bad_signature");
  });

  it("refuses an expired configuration", async () => {
    const iat = Math.floor(Date.now() / 1000) - 7200;
    expect(await refusal(verifyConfig(await sign(current, { iat, exp: iat + 3600 }), pin, DEVICE, { fetchJson }))).toBe("expired");
  });

  it("refuses one addressed to another device", async () => {
    expect(await refusal(verifyConfig(await sign(current, { aud: "someone-else" }), pin, DEVICE, { fetchJson }))).toBe("wrong_audience");
  });

  it("refuses one issued for another organisation", async () => {
    expect(await refusal(verifyConfig(await sign(current, { iss: "flyball:pellworth" }), pin, DEVICE, { fetchJson }))).toBe("wrong_issuer");
  });

  it("refuses a token of another type (a device token is not a configuration)", async () => {
    expect(await refusal(verifyConfig(await sign(current, { typ: "JWT" }), pin, DEVICE, { fetchJson }))).toBe("malformed");
  });

  it("after a rotation re-fetches the pinned JWKS for an unknown kid, and refuses a kid it still does not know", async () => {
    const local = { ...pin, keys: { keys: [...pin.keys.keys] } };
    served = { keys: [current.jwk as never, rotated.jwk as never] };
    const config = await verifyConfig(await sign(rotated), local, DEVICE, { fetchJson });
    expect(config.loops).toHaveLength(1);
    expect(local.keys.keys.map((k) => k.kid)).toEqual(["k1", "k2"]);
    const unknown = await makeKey("k9");
    expect(await refusal(verifyConfig(await sign(unknown), local, DEVICE, { fetchJson }))).toBe("unknown_key");
  });
});

describe("decideLoops", () => {
  it("applies higher versions, keeps equal ones, refuses lower ones with the reason", () => {
    const config = { iss: "flyball:corvid", aud: DEVICE, iat: 0, exp: 0, loops: [loop("a", 5), loop("b", 4), loop("c", 2)] };
    const decisions = decideLoops(config, new Map([["a", 4], ["b", 4], ["c", 3]]));
    expect(decisions.map((d) => d.action)).toEqual(["apply", "keep", "refuse"]);
    expect(decisions[2]).toMatchObject({ reason: "version 2 is lower than the applied version 3" });
  });
});
