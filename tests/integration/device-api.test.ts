// The device API over real HTTP against the running app: enrolment, token checks, digest
// ingest, config pull and acknowledgement.
import { and, asc, eq, sql } from "drizzle-orm";
import { compactVerify, importJWK, SignJWT, decodeJwt } from "jose";
import { randomUUID } from "node:crypto";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { auditEvent, device, deviceJti, digestSeq, loop, machine } from "~/.server/db/schema";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { createTeam, createTestFleet } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, postJson, signIn } from "../support/http";

type Fleet = Awaited<ReturnType<typeof createTestFleet>>;
let team: Awaited<ReturnType<typeof createTeam>>;
let fleet: Fleet;

async function digestCount(machineId: string): Promise<number> {
  const result = await db().execute<{ n: number }>(sql`select count(*)::int as n from digest d join loop l on l.organisation_id = d.organisation_id and l.id = d.loop_id where l.machine_id = ${machineId}::uuid`);
  return Number(result.rows[0].n);
}

async function enrolled(index: number, alg: "EdDSA" | "ES256" = "EdDSA") {
  const client = new DeviceClient(APP_URL, await createDeviceIdentity(alg));
  const response = await client.enrol(fleet.machines[index].enrolmentCode, "1.0.0");
  expect(response.status).toBe(201);
  return client;
}

const minutesAgo = (m: number) => new Date(Date.now() - m * 60_000);

beforeAll(async () => {
  team = await createTeam(db(), ["owner"]);
  fleet = await createTestFleet(db(), { organisationId: team.organisation.id, machinesPerSite: 4 });
});
afterAll(closeDb);

describe("enrol → post → pull → ack", () => {
  it("completes the round trip and every step is visible in the database", async () => {
    const client = new DeviceClient(APP_URL, await createDeviceIdentity("EdDSA"));
    const enrol = await client.enrol(fleet.machines[0].enrolmentCode, "2.3.4");
    expect(enrol.status).toBe(201);
    const body = await enrol.json();
    expect(body).toMatchObject({ machineId: fleet.machines[0].id, alg: "EdDSA", loopKeys: ["speed", "temp"] });

    const post = await client.postDigests([sampleDigest("temp", 1, minutesAgo(3)), sampleDigest("speed", 1, minutesAgo(3))]);
    expect(post.status).toBe(200);
    expect(await post.json()).toEqual({ accepted: 2, duplicates: 0, rejected: [] });
    expect(await digestCount(fleet.machines[0].id)).toBe(2);
    const [m] = await db().select().from(machine).where(eq(machine.id, fleet.machines[0].id));
    expect(m.lastSeenAt).not.toBeNull();
    expect(m.firmware).toBe("2.3.4");

    const config = await client.getConfig();
    expect(config.status).toBe(200);
    const etag = config.headers.get("etag");
    expect(etag).toBeTruthy();
    expect(config.headers.get("content-type")).toBe("application/jose");
    const jws = await config.text();
    const jwksUrl = /<([^>]+)>; rel="jwks"/.exec(config.headers.get("link") ?? "")![1];
    expect(jwksUrl).toMatch(/^\/api\/v1\/o\/[a-z0-9-]+\/jwks\.json$/);
    const jwks = await (await fetch(`${APP_URL}${jwksUrl}`)).json();
    const kid = JSON.parse(Buffer.from(jws.split(".")[0], "base64url").toString()).kid;
    const jwk = jwks.keys.find((k: { kid: string }) => k.kid === kid);
    const verified = await compactVerify(jws, await importJWK(jwk, "EdDSA"));
    const payload = JSON.parse(new TextDecoder().decode(verified.payload));
    expect(payload.aud).toBe(client.deviceId);
    expect(payload.exp).toBeGreaterThan(payload.iat);
    const temp = payload.loops.find((l: { key: string }) => l.key === "temp");
    expect(temp).toMatchObject({ version: 1, gains: { kp: 6, ki: 0.04, kd: 0 }, outputMin: 0, outputMax: 255 });

    const again = await client.getConfig(etag!);
    expect(again.status).toBe(304);

    // Asked for JSON, the same JWS comes wrapped with its expiry and the JWKS address.
    const wrapped = await fetch(`${APP_URL}/api/v1/device/config`, { headers: { authorization: `Bearer ${await client.token()}`, accept: "application/json" } });
    expect(wrapped.status).toBe(200);
    const wrappedBody = await wrapped.json();
    expect(wrappedBody.jwksUrl).toBe(jwksUrl);
    expect(wrappedBody.jws.split(".")).toHaveLength(3);

    const ack = await client.ack({ loop: "temp", version: 1, status: "applied" });
    expect(ack.status).toBe(200);
    const [l] = await db().select().from(loop).where(and(eq(loop.machineId, fleet.machines[0].id), eq(loop.key, "temp")));
    expect(l.appliedVersion).toBe(1);
    expect(l.ackStatus).toBe("applied");

    expect((await client.ack({ loop: "nope", version: 1, status: "applied" })).status).toBe(404);
    expect((await client.ack({ loop: "temp", version: 99, status: "applied" })).status).toBe(409);
    expect((await client.ack({ loop: "temp", version: 1, status: "maybe" as "applied" })).status).toBe(400);

    const audits = await db().select().from(auditEvent).where(and(eq(auditEvent.organisationId, team.organisation.id), eq(auditEvent.targetId, fleet.machines[0].id)));
    expect(audits.map((a) => a.action)).toContain("device.enrolled");
  });

  it("accepts P-256 keys (ES256)", async () => {
    const client = await enrolled(1, "ES256");
    expect((await client.postDigests([sampleDigest("temp", 1, minutesAgo(2))])).status).toBe(200);
  });

  it("uses an enrolment code once only and refuses bad enrolments", async () => {
    const code = fleet.machines[2].enrolmentCode;
    const first = new DeviceClient(APP_URL, await createDeviceIdentity());
    expect((await first.enrol(code)).status).toBe(201);
    const second = new DeviceClient(APP_URL, await createDeviceIdentity());
    const reused = await second.enrol(code);
    expect(reused.status).toBe(401);
    expect((await reused.json()).error.code).toBe("invalid_enrolment_code");
    const identity = await createDeviceIdentity();
    // A private key must never be accepted as the public key.
    const leaked = await postJson("/api/v1/device/enrol", { enrolmentCode: "FB-AAAAA-AAAAA-AAAAA-AAAAA", publicKey: identity.privateJwk });
    expect(leaked.status).toBe(400);
    const wrongKty = await postJson("/api/v1/device/enrol", { enrolmentCode: "FB-AAAAA-AAAAA-AAAAA-AAAAA", publicKey: { kty: "RSA", n: "x", e: "AQAB" } });
    expect(wrongKty.status).toBe(400);
    expect((await postJson("/api/v1/device/enrol", "{not json")).status).toBe(400);
    expect((await postJson("/api/v1/device/enrol", { enrolmentCode: "FB-AAAAA-AAAAA-AAAAA-AAAAA", publicKey: identity.publicJwk })).status).toBe(401);
  });
});

describe("forged and unusable tokens are refused and write nothing", () => {
  let client: DeviceClient;
  beforeAll(async () => {
    client = await enrolled(3);
  });

  /** All a device call can write: its machine's loops' config and acknowledgement state, digests, last contact, used jtis, audit rows. */
  async function written() {
    const machineId = fleet.machines[3].id;
    return {
      loops: await db()
        .select({ key: loop.key, configVersion: loop.configVersion, appliedVersion: loop.appliedVersion, ackStatus: loop.ackStatus, ackReason: loop.ackReason, ackedAt: loop.ackedAt })
        .from(loop)
        .where(eq(loop.machineId, machineId))
        .orderBy(asc(loop.key)),
      digests: await digestCount(machineId),
      lastSeenAt: (await db().select({ at: machine.lastSeenAt }).from(machine).where(eq(machine.id, machineId)))[0].at,
      jtis: await db().select().from(deviceJti).where(eq(deviceJti.deviceId, client.deviceId)).orderBy(asc(deviceJti.jti)),
      audit: await db().select().from(auditEvent).where(eq(auditEvent.organisationId, team.organisation.id)).orderBy(asc(auditEvent.id)),
    };
  }

  const b64 = (value: unknown) => Buffer.from(JSON.stringify(value)).toString("base64url");
  const claims = () => {
    const now = Math.floor(Date.now() / 1000);
    return { iss: client.deviceId, aud: "flyball-device", iat: now, exp: now + 60, jti: randomUUID() };
  };

  const cases: [string, () => Promise<string>, string][] = [
    ["alg none", async () => `${b64({ alg: "none", kid: client.deviceId })}.${b64(claims())}.`, "unsupported_alg"],
    [
      "HS256 signed with the public key",
      async () =>
        new SignJWT(claims())
          .setProtectedHeader({ alg: "HS256", kid: client.deviceId })
          .sign(new TextEncoder().encode(JSON.stringify(client.identity.publicJwk))),
      "unsupported_alg",
    ],
    ["wrong audience", () => client.token({ aud: "someone-else" }), "wrong_audience"],
    ["wrong issuer", () => client.token({ iss: randomUUID() }), "wrong_issuer"],
    ["expired", () => client.token({ iat: Math.floor(Date.now() / 1000) - 600, lifetime: 120 }), "token_expired"],
    ["lifetime over 5 minutes", () => client.token({ lifetime: 301 }), "token_lifetime_too_long"],
    ["iat in the future beyond the skew", () => client.token({ iat: Math.floor(Date.now() / 1000) + 120, lifetime: 60 }), "token_not_yet_valid"],
    ["unknown kid", () => client.token({ kid: randomUUID() }), "unknown_key"],
    [
      "signed by another key",
      async () => {
        const other = await createDeviceIdentity();
        return new SignJWT(claims()).setProtectedHeader({ alg: "EdDSA", kid: client.deviceId }).sign(await importJWK(other.privateJwk, "EdDSA"));
      },
      "bad_signature",
    ],
    ["garbage", async () => "not.a.token", "malformed_token"],
  ];

  for (const [name, forge, reason] of cases) {
    it(`refuses ${name} on digests, config and ack, and writes nothing`, async () => {
      const everything = await written();
      const before = await digestCount(fleet.machines[3].id);
      const response = await client.postDigests([sampleDigest("temp", 1000 + Math.floor(Math.random() * 1e6), minutesAgo(5))], await forge());
      expect(response.status).toBe(401);
      const body = await response.json();
      expect(body.error.code).toBe(reason);
      expect(body.error.message).toBe("The device could not be authenticated.");
      expect(await digestCount(fleet.machines[3].id)).toBe(before);
      const config = await client.getConfig(undefined, await forge());
      expect(config.status).toBe(401);
      expect((await config.json()).error.code).toBe(reason);
      // An acknowledgement the machine would accept with a good token (temp is at version 1).
      const ack = await client.ack({ loop: "temp", version: 1, status: "applied" }, await forge());
      expect(ack.status).toBe(401);
      expect((await ack.json()).error.code).toBe(reason);
      expect(await written()).toEqual(everything);
    });
  }

  it("refuses a missing token", async () => {
    const response = await postJson("/api/v1/device/digests", { digests: [sampleDigest("temp", 1, minutesAgo(5))] });
    expect(response.status).toBe(401);
    expect((await response.json()).error.code).toBe("missing_token");
  });

  it("refuses a replayed jti", async () => {
    const token = await client.token();
    const before = await digestCount(fleet.machines[3].id);
    expect((await client.postDigests([sampleDigest("temp", 1, minutesAgo(4))], token)).status).toBe(200);
    const replay = await client.postDigests([sampleDigest("temp", 2, minutesAgo(3))], token);
    expect(replay.status).toBe(401);
    expect((await replay.json()).error.code).toBe("token_replayed");
    expect(await digestCount(fleet.machines[3].id)).toBe(before + 1);
  });

  it("refuses a token replayed on ack or config, whichever route used it first, and writes nothing", async () => {
    const acked = await client.token();
    expect((await client.ack({ loop: "speed", version: 1, status: "applied" }, acked)).status).toBe(200);
    const pulled = await client.token();
    expect((await client.getConfig(undefined, pulled)).status).toBe(200);
    const posted = await client.token();
    expect((await client.postDigests([sampleDigest("speed", 3, minutesAgo(2))], posted)).status).toBe(200);
    const before = await written();
    expect(before.loops.find((l) => l.key === "speed")).toMatchObject({ ackStatus: "applied", appliedVersion: 1 });
    const replays: [string, () => Promise<Response>][] = [];
    for (const [used, token] of [["ack", acked], ["config", pulled], ["digests", posted]] as const) {
      replays.push([`${used} token on ack`, () => client.ack({ loop: "speed", version: 1, status: "rejected", reason: "replayed" }, token)]);
      replays.push([`${used} token on config`, () => client.getConfig(undefined, token)]);
    }
    for (const [what, send] of replays) {
      const response = await send();
      expect(response.status, what).toBe(401);
      expect((await response.json()).error.code, what).toBe("token_replayed");
    }
    expect(await written()).toEqual(before);
  });

  it("refuses a revoked device, and a re-enrolled one works again", async () => {
    const victim = await enrolled(4);
    const owner = await signIn(team.people[0].email);
    const revoke = await postJson(`/api/v1/o/${team.organisation.slug}/machines/${fleet.machines[4].id}/revoke-device`, {}, owner);
    expect(revoke.status).toBe(200);
    const before = await digestCount(fleet.machines[4].id);
    const refused = await victim.postDigests([sampleDigest("temp", 1, minutesAgo(2))]);
    expect(refused.status).toBe(401);
    expect((await refused.json()).error.code).toBe("device_revoked");
    expect(await digestCount(fleet.machines[4].id)).toBe(before);
    const [d] = await db().select().from(device).where(eq(device.id, victim.deviceId));
    expect(d.status).toBe("revoked");
    const fresh = await postJson(`/api/v1/o/${team.organisation.slug}/machines/${fleet.machines[4].id}/enrolment-code`, {}, owner);
    expect(fresh.status).toBe(201);
    const { enrolmentCode } = await fresh.json();
    const again = new DeviceClient(APP_URL, await createDeviceIdentity());
    expect((await again.enrol(enrolmentCode.code)).status).toBe(201);
    expect((await again.postDigests([sampleDigest("temp", 1, minutesAgo(2))])).status).toBe(200);
  });

  it("refuses a decommissioned machine's device", async () => {
    const gone = await enrolled(5);
    const owner = await signIn(team.people[0].email);
    expect((await postJson(`/api/v1/o/${team.organisation.slug}/machines/${fleet.machines[5].id}/decommission`, {}, owner)).status).toBe(200);
    const refused = await gone.postDigests([sampleDigest("temp", 1, minutesAgo(2))]);
    expect(refused.status).toBe(401);
    expect(["device_revoked", "machine_decommissioned"]).toContain((await refused.json()).error.code);
  });

  it("signs its own tokens with a lifetime the server accepts", () => {
    return client.token().then((t) => {
      const c = decodeJwt(t);
      expect(c.exp! - c.iat!).toBeLessThanOrEqual(300);
    });
  });

  // MAX_TOKEN_LIFETIME_S is 300: exp - iat = 300 passes, 301 is refused, on every device route.
  let seq = 600_000;
  const lifetimeRoutes: [string, (token: string) => Promise<Response>][] = [
    ["digests", (token) => client.postDigests([sampleDigest("temp", seq++, minutesAgo(1))], token)],
    ["config", (token) => client.getConfig(undefined, token)],
    ["ack", (token) => client.ack({ loop: "temp", version: 1, status: "applied" }, token)],
  ];
  it.each(lifetimeRoutes)("accepts a token living exactly 300 s on %s and refuses one of 301 s", async (_, send) => {
    const exact = await client.token({ lifetime: 300 });
    const c = decodeJwt(exact);
    expect(c.exp! - c.iat!).toBe(300);
    expect((await send(exact)).status).toBe(200);

    const tooLong = await client.token({ lifetime: 301 });
    const t = decodeJwt(tooLong);
    expect(t.exp! - t.iat!).toBe(301);
    const before = await written();
    const refused = await send(tooLong);
    expect(refused.status).toBe(401);
    expect((await refused.json()).error.code).toBe("token_lifetime_too_long");
    expect(await written()).toEqual(before);
  });
});

describe("digest ingest", () => {
  let client: DeviceClient;
  beforeAll(async () => {
    client = await enrolled(6);
  });

  it("stores a batch posted twice only once", async () => {
    const start = minutesAgo(120);
    const batch = Array.from({ length: 20 }, (_, i) => sampleDigest(i % 2 ? "temp" : "speed", 100 + i, new Date(start.getTime() + i * 60_000)));
    const before = await digestCount(fleet.machines[6].id);
    expect(await (await client.postDigests(batch)).json()).toEqual({ accepted: 20, duplicates: 0, rejected: [] });
    expect(await (await client.postDigests(batch)).json()).toEqual({ accepted: 0, duplicates: 20, rejected: [] });
    // The same (loop, seq) with another window is still a duplicate.
    const shifted = { ...batch[0], windowStart: minutesAgo(30).toISOString(), windowEnd: minutesAgo(29).toISOString() };
    expect(await (await client.postDigests([shifted, shifted])).json()).toEqual({ accepted: 0, duplicates: 2, rejected: [] });
    expect(await digestCount(fleet.machines[6].id)).toBe(before + 20);
  });

  it("stores the 497 good digests of a batch with 3 bad ones and names the 3", async () => {
    const start = minutesAgo(24 * 60);
    const batch: Record<string, unknown>[] = Array.from({ length: 500 }, (_, i) => sampleDigest(i % 2 ? "temp" : "speed", 10_000 + i, new Date(start.getTime() + i * 60_000)));
    batch[17] = { ...batch[17], satHighFrac: 1.5 };
    batch[250] = { ...batch[250], windowEnd: batch[250].windowStart };
    batch[499] = { ...batch[499], loop: "no_such_loop" };
    const before = await digestCount(fleet.machines[6].id);
    const response = await client.postDigests(batch);
    expect(response.status).toBe(200);
    const body = await response.json();
    expect(body.accepted).toBe(497);
    expect(body.duplicates).toBe(0);
    expect(body.rejected.map((r: { index: number }) => r.index)).toEqual([17, 250, 499]);
    expect(body.rejected.map((r: { code: string }) => r.code)).toEqual(["invalid_digest", "invalid_window", "unknown_loop"]);
    expect(await digestCount(fleet.machines[6].id)).toBe(before + 497);
  });

  it("refuses hostile items one by one", async () => {
    const base = sampleDigest("temp", 50_000, minutesAgo(10));
    const bad = [
      { ...base, seq: 50_001, errRms: -1 },
      { ...base, seq: 50_002, intClampFrac: Number.NaN },
      { ...base, seq: 50_003, spMean: "220" },
      { ...base, seq: 50_004, windowStart: "yesterday" },
      { ...base, seq: 1.5 },
      { ...base, seq: 50_005, windowStart: new Date(Date.now() + 86_400_000).toISOString(), windowEnd: new Date(Date.now() + 86_460_000).toISOString() },
      null,
      "digest",
    ];
    const body = await (await client.postDigests(bad)).json();
    expect(body.accepted).toBe(0);
    expect(body.rejected).toHaveLength(bad.length);
  });

  it("answers 413 for oversize bodies and batches", async () => {
    const big = Array.from({ length: 400 }, (_, i) => ({ ...sampleDigest("temp", 90_000 + i, minutesAgo(50)), padding: "x".repeat(700) }));
    const before = await digestCount(fleet.machines[6].id);
    expect((await client.postDigests(big)).status).toBe(413);
    const many = Array.from({ length: 501 }, (_, i) => sampleDigest("temp", 95_000 + i, minutesAgo(40)));
    expect((await client.postDigests(many)).status).toBe(413);
    expect(await digestCount(fleet.machines[6].id)).toBe(before);
  });

  it("answers 400 for a body that is not a batch", async () => {
    const token = await client.token();
    const response = await fetch(`${APP_URL}/api/v1/device/digests`, { method: "POST", headers: { "content-type": "application/json", authorization: `Bearer ${token}` }, body: "[1,2" });
    expect(response.status).toBe(400);
    expect((await client.postDigests([])).status).toBe(400);
  });

  it("answers 429 with Retry-After when a device floods", async () => {
    const flooder = await enrolled(7);
    const responses = await Promise.all(Array.from({ length: 90 }, async (_, i) => flooder.postDigests([sampleDigest("speed", 70_000 + i, minutesAgo(15))])));
    const limited = responses.filter((r) => r.status === 429);
    expect(limited.length).toBeGreaterThan(0);
    expect(Number(limited[0].headers.get("retry-after"))).toBeGreaterThanOrEqual(1);
    expect(responses.every((r) => r.status === 200 || r.status === 429)).toBe(true);
  });
});

// Requests that arrive together share one statement (app/.server/db/batch.ts): each must still
// be judged on its own, in the order it would have been judged alone.
describe("requests that arrive together", () => {
  let more: Fleet;
  const enrolFrom = async (index: number) => {
    const client = new DeviceClient(APP_URL, await createDeviceIdentity());
    expect((await client.enrol(more.machines[index].enrolmentCode)).status).toBe(201);
    return client;
  };
  beforeAll(async () => {
    more = await createTestFleet(db(), { organisationId: team.organisation.id, machinesPerSite: 7 });
  });

  it("stores concurrent posts from many devices, each digest once and counted for its own request", async () => {
    const clients = await Promise.all([0, 1, 2, 3, 4, 5].map(enrolFrom));
    const responses = await Promise.all(
      clients.flatMap((c) => Array.from({ length: 5 }, (_, k) => c.postDigests([sampleDigest("temp", 10 + k, minutesAgo(40 - k)), sampleDigest("speed", 10 + k, minutesAgo(40 - k))]))),
    );
    expect(responses.map((r) => r.status)).toEqual(Array(30).fill(200));
    for (const body of await Promise.all(responses.map((r) => r.json()))) expect(body).toEqual({ accepted: 2, duplicates: 0, rejected: [] });
    for (let i = 0; i < 6; i++) expect(await digestCount(more.machines[i].id)).toBe(10);
  });

  it("accepts a token sent twice at once only once", async () => {
    const client = await enrolFrom(6);
    const token = await client.token();
    const responses = await Promise.all([client.postDigests([sampleDigest("temp", 1, minutesAgo(9))], token), client.postDigests([sampleDigest("temp", 2, minutesAgo(8))], token)]);
    expect(responses.map((r) => r.status).sort()).toEqual([200, 401]);
    const refused = responses.find((r) => r.status === 401)!;
    expect((await refused.json()).error.code).toBe("token_replayed");
    expect(await digestCount(more.machines[6].id)).toBe(1);
  });

  it("stores a digest posted in two requests at once only once", async () => {
    const client = await enrolFrom(7);
    const digest = sampleDigest("speed", 5, minutesAgo(20));
    const bodies = await Promise.all([client.postDigests([digest]), client.postDigests([digest]), client.postDigests([digest])].map(async (r) => (await r).json()));
    expect(bodies.reduce((n, b) => n + b.accepted, 0)).toBe(1);
    expect(bodies.reduce((n, b) => n + b.duplicates, 0)).toBe(2);
    expect(await digestCount(more.machines[7].id)).toBe(1);
  });

  it("does not let a replayed request take a digest from a fresh one", async () => {
    const client = await enrolFrom(8);
    const used = await client.token();
    expect((await client.postDigests([sampleDigest("temp", 500, minutesAgo(30))], used)).status).toBe(200);
    const before = await digestCount(more.machines[8].id);
    const digest = sampleDigest("temp", 501, minutesAgo(29));
    // The replay comes first in the batch; the fresh request must still store the digest.
    const [replay, fresh] = await Promise.all([client.postDigests([digest], used), client.postDigests([digest])]);
    expect(replay.status).toBe(401);
    expect(fresh.status).toBe(200);
    expect(await fresh.json()).toEqual({ accepted: 1, duplicates: 0, rejected: [] });
    expect(await digestCount(more.machines[8].id)).toBe(before + 1);
  });

  it("answers a revoked device 401 even when its body is bad", async () => {
    const client = await enrolFrom(9);
    const owner = await signIn(team.people[0].email);
    expect((await postJson(`/api/v1/o/${team.organisation.slug}/machines/${more.machines[9].id}/revoke-device`, {}, owner)).status).toBe(200);
    const garbage = await fetch(`${APP_URL}/api/v1/device/digests`, { method: "POST", headers: { "content-type": "application/json", authorization: `Bearer ${await client.token()}` }, body: "[1,2" });
    expect(garbage.status).toBe(401);
    expect((await garbage.json()).error.code).toBe("device_revoked");
  });

  it("uses up a token whose body is refused", async () => {
    const client = await enrolFrom(10);
    const token = await client.token();
    expect((await client.postDigests([], token)).status).toBe(400);
    const again = await client.postDigests([sampleDigest("temp", 900, minutesAgo(5))], token);
    expect(again.status).toBe(401);
    expect((await again.json()).error.code).toBe("token_replayed");
  });

  it("answers 200 with the new version, not 304, once a loop's gains change", async () => {
    const client = await enrolFrom(11);
    const first = await client.getConfig();
    const etag = first.headers.get("etag")!;
    expect((await client.getConfig(etag)).status).toBe(304);
    await db()
      .update(loop)
      .set({ gains: { kp: 7, ki: 0.05, kd: 0 }, configVersion: 2 })
      .where(and(eq(loop.machineId, more.machines[11].id), eq(loop.key, "temp")));
    const changed = await client.getConfig(etag);
    expect(changed.status).toBe(200);
    expect(changed.headers.get("etag")).not.toBe(etag);
    const temp = decodeJwt(await changed.text()).loops as { key: string; version: number; gains: { kp: number } }[];
    expect(temp.find((l) => l.key === "temp")).toMatchObject({ version: 2, gains: { kp: 7 } });
    expect((await client.getConfig(changed.headers.get("etag")!)).status).toBe(304);
  });

  it("forgets a deleted loop's (loop, seq) claims with its digests", async () => {
    const client = await enrolFrom(12);
    expect((await client.postDigests([sampleDigest("speed", 1, minutesAgo(6)), sampleDigest("speed", 2, minutesAgo(5))])).status).toBe(200);
    const [speed] = await db().select().from(loop).where(and(eq(loop.machineId, more.machines[12].id), eq(loop.key, "speed")));
    const claims = () => db().select().from(digestSeq).where(eq(digestSeq.loopId, speed.id));
    expect(await claims()).toHaveLength(2);
    await db().delete(loop).where(eq(loop.id, speed.id));
    expect(await claims()).toHaveLength(0);
  });
});
