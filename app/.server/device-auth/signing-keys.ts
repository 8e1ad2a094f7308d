// Each organisation's Ed25519 key for signing device configurations. Created with the
// organisation's first need for it (the demo seed creates it up front); the public halves are
// published as a JWKS at /api/v1/o/:slug/jwks.json.
import { and, asc, eq } from "drizzle-orm";
import { exportJWK, generateKeyPair, importJWK, type CryptoKey } from "jose";
import type { Db } from "~/.server/db/client";
import { organisation, organisationSigningKey } from "~/.server/db/schema";

export type SigningKey = { kid: string; alg: "EdDSA"; privateKey: CryptoKey | Uint8Array };

const cache = new Map<string, Promise<SigningKey>>();

export async function createSigningKey(db: Db, { organisationId }: { organisationId: string }) {
  const { publicKey, privateKey } = await generateKeyPair("EdDSA", { crv: "Ed25519", extractable: true });
  const [row] = await db
    .insert(organisationSigningKey)
    .values({ organisationId, alg: "EdDSA", publicJwk: (await exportJWK(publicKey)) as Record<string, string>, privateJwk: (await exportJWK(privateKey)) as Record<string, string> })
    .returning({ id: organisationSigningKey.id });
  return row.id;
}

async function loadActiveKey(db: Db, organisationId: string): Promise<SigningKey> {
  const select = () =>
    db
      .select({ id: organisationSigningKey.id, privateJwk: organisationSigningKey.privateJwk })
      .from(organisationSigningKey)
      .where(and(eq(organisationSigningKey.organisationId, organisationId), eq(organisationSigningKey.status, "active")))
      .orderBy(asc(organisationSigningKey.createdAt), asc(organisationSigningKey.id))
      .limit(1);
  let [row] = await select();
  if (!row) {
    await createSigningKey(db, { organisationId });
    // Two processes may race here; both then pick the oldest active key.
    [row] = await select();
  }
  return { kid: row.id, alg: "EdDSA", privateKey: await importJWK({ ...row.privateJwk, alg: "EdDSA" }, "EdDSA") };
}

/** The organisation's active signing key (cached per process; keys are only ever added). */
export function getSigningKey(db: Db, organisationId: string): Promise<SigningKey> {
  let pending = cache.get(organisationId);
  if (!pending) {
    pending = loadActiveKey(db, organisationId);
    pending.catch(() => cache.delete(organisationId));
    cache.set(organisationId, pending);
  }
  return pending;
}

/** The JWKS of an organisation by slug, or null when there is no such organisation. */
export async function getOrganisationJwks(db: Db, slug: string) {
  const [org] = await db.select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, slug)).limit(1);
  if (!org) return null;
  await getSigningKey(db, org.id);
  const rows = await db
    .select({ id: organisationSigningKey.id, alg: organisationSigningKey.alg, publicJwk: organisationSigningKey.publicJwk })
    .from(organisationSigningKey)
    .where(eq(organisationSigningKey.organisationId, org.id))
    .orderBy(asc(organisationSigningKey.createdAt));
  return { keys: rows.map((r) => ({ kty: r.publicJwk.kty, crv: r.publicJwk.crv, x: r.publicJwk.x, kid: r.id, alg: r.alg, use: "sig" })) };
}
