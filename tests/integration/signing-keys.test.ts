// Signing-key rotation: the new key signs at once, both keys are published during the overlap,
// a device that pinned the JWKS before the rotation fetches it again for the new kid, and the
// old key is withdrawn after the overlap (then a configuration signed with it is refused).
import { and, eq } from "drizzle-orm";
import { SignJWT, importJWK, decodeProtectedHeader } from "jose";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { organisationSigningKey } from "~/.server/db/schema";
import { openJwk, rotateSigningKey, withdrawRetiredSigningKeys, type SealedJwk } from "~/.server/device-auth/signing-keys";
import { pinJwks, verifyConfig, type PinnedJwks } from "../../scripts/simulator/config-verifier";
import { createDeviceIdentity, DeviceClient } from "../../scripts/simulator/device-client";
import { createTeam, createTestFleet } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, get } from "../support/http";

let team: Awaited<ReturnType<typeof createTeam>>;
let client: DeviceClient;
let pin: PinnedJwks;
const jwksPath = () => `/api/v1/o/${team.organisation.slug}/jwks.json`;
const kids = async () => ((await (await get(jwksPath())).json()) as { keys: { kid: string }[] }).keys.map((k) => k.kid);

beforeAll(async () => {
  team = await createTeam(db(), ["owner"]);
  const fleet = await createTestFleet(db(), { organisationId: team.organisation.id });
  client = new DeviceClient(APP_URL, await createDeviceIdentity("EdDSA"));
  expect((await client.enrol(fleet.machines[0].enrolmentCode)).status).toBe(201);
  pin = await pinJwks(`${APP_URL}${jwksPath()}`);
});
afterAll(closeDb);

describe("signing-key rotation", () => {
  it("rotates with an overlap and withdraws the old key afterwards", async () => {
    const [oldKid] = await kids();
    const first = await client.getConfig();
    const etag = first.headers.get("etag")!;
    const oldJws = await first.text();
    expect(decodeProtectedHeader(oldJws).kid).toBe(oldKid);

    const { kid: newKid, retired } = await rotateSigningKey(db(), { organisationId: team.organisation.id, actor: "system" });
    expect(retired).toEqual([oldKid]);
    expect(await kids()).toEqual([oldKid, newKid]);

    // The next pull is signed with the new key (the ETag changed with it).
    const second = await client.getConfig(etag);
    expect(second.status).toBe(200);
    const newJws = await second.text();
    expect(decodeProtectedHeader(newJws).kid).toBe(newKid);
    // The device pinned only the old key: it fetches its own JWKS address again and accepts.
    expect(pin.keys.keys.map((k) => k.kid)).toEqual([oldKid]);
    await verifyConfig(newJws, pin, client.deviceId);
    expect(pin.keys.keys.map((k) => k.kid)).toEqual([oldKid, newKid]);
    // During the overlap a configuration signed with the old key still verifies.
    await verifyConfig(oldJws, pin, client.deviceId);

    // Not before the overlap has passed …
    expect(await withdrawRetiredSigningKeys(db(), { organisationId: team.organisation.id })).toBe(0);
    expect(await kids()).toEqual([oldKid, newKid]);
    // … then the old key leaves the JWKS (idempotent).
    const later = new Date(Date.now() + 8 * 86_400_000);
    expect(await withdrawRetiredSigningKeys(db(), { organisationId: team.organisation.id, now: later })).toBe(1);
    expect(await withdrawRetiredSigningKeys(db(), { organisationId: team.organisation.id, now: later })).toBe(0);
    expect(await kids()).toEqual([newKid]);

    // A device that learns the JWKS afresh refuses a configuration signed with the withdrawn key,
    // even one made now with that key's private half.
    const [row] = await db().select().from(organisationSigningKey).where(and(eq(organisationSigningKey.organisationId, team.organisation.id), eq(organisationSigningKey.id, oldKid)));
    expect(row.status).toBe("withdrawn");
    const oldPrivate = await importJWK({ ...openJwk(row.privateJwk as unknown as SealedJwk, team.organisation.id), alg: "EdDSA" }, "EdDSA");
    const late = await new SignJWT({ loops: [] })
      .setProtectedHeader({ alg: "EdDSA", kid: oldKid, typ: "flyball-config+jwt" })
      .setIssuer(`flyball:${team.organisation.slug}`)
      .setAudience(client.deviceId)
      .setIssuedAt()
      .setExpirationTime("1h")
      .sign(oldPrivate);
    const fresh = await pinJwks(`${APP_URL}${jwksPath()}`);
    await expect(verifyConfig(late, fresh, client.deviceId)).rejects.toMatchObject({ code: "unknown_key" });
  });
});
