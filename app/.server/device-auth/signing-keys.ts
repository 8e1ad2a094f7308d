// Each organisation's Ed25519 key for signing device configurations. Made when the
// organisation is made (createSigningKey; scripts/migrate.ts gives one to any organisation
// without), never on a read; the public halves are published as a JWKS at
// /api/v1/o/:slug/jwks.json.
//
// Rotation (rotateSigningKey, `npm run keys:rotate -- <slug>`): a new key becomes the one
// active key and signs from then on; the old one is `retired` and stays in the JWKS for the
// overlap (SIGNING_KEY_OVERLAP_MS, longer than a configuration lives), after which the
// `device.withdraw-signing-keys` job withdraws it from the JWKS. Config pulls learn the active
// kid from their gate statement, so the app signs with the new key from the next pull on.
//
// Private keys are stored encrypted (AES-256-GCM under the key-encryption key in
// FLYBALL_KEY_ENCRYPTION_KEY, which npm start generates into .local/ and which never enters the
// database): a dump of the database alone cannot sign a configuration.
import { createCipheriv, createDecipheriv, randomBytes } from "node:crypto";
import { and, asc, desc, eq, inArray, lt, notExists, sql } from "drizzle-orm";
import { recordAudit } from "~/.server/audit/record-audit";
import { exportJWK, generateKeyPair, importJWK, type CryptoKey } from "jose";
import type { Db } from "~/.server/db/client";
import { organisation, organisationSigningKey } from "~/.server/db/schema";

export type SigningKey = { kid: string; alg: "EdDSA"; privateKey: CryptoKey | Uint8Array };

/** The stored form of a private JWK: `{ enc, iv, tag, ct }`, all base64url. */
export type SealedJwk = { enc: "A256GCM"; iv: string; tag: string; ct: string };

const cache = new Map<string, { at: number; kid: string | null; key: Promise<SigningKey> }>();

/** How long a process keeps using the active key it loaded when the caller cannot name the current kid. */
export const KEY_CACHE_MS = 60_000;
/** How long a retired key stays published: a configuration lives 24 h, devices may be offline a while. */
export const SIGNING_KEY_OVERLAP_MS = 7 * 24 * 3600_000;

function keyEncryptionKey(): Buffer {
  const text = process.env.FLYBALL_KEY_ENCRYPTION_KEY ?? "";
  const key = Buffer.from(text, "base64url");
  if (key.length !== 32) throw new Error("FLYBALL_KEY_ENCRYPTION_KEY must be 32 bytes in base64url (npm start generates one into .local/key-encryption-key).");
  return key;
}

/** The organisation id is bound in as associated data, so a sealed key cannot be moved to another tenant. */
export function sealJwk(jwk: Record<string, string>, organisationId: string): SealedJwk {
  const iv = randomBytes(12);
  const cipher = createCipheriv("aes-256-gcm", keyEncryptionKey(), iv);
  cipher.setAAD(Buffer.from(organisationId));
  const ct = Buffer.concat([cipher.update(JSON.stringify(jwk), "utf8"), cipher.final()]);
  return { enc: "A256GCM", iv: iv.toString("base64url"), tag: cipher.getAuthTag().toString("base64url"), ct: ct.toString("base64url") };
}

export function openJwk(sealed: SealedJwk, organisationId: string): Record<string, string> {
  const decipher = createDecipheriv("aes-256-gcm", keyEncryptionKey(), Buffer.from(sealed.iv, "base64url"));
  decipher.setAAD(Buffer.from(organisationId));
  decipher.setAuthTag(Buffer.from(sealed.tag, "base64url"));
  return JSON.parse(Buffer.concat([decipher.update(Buffer.from(sealed.ct, "base64url")), decipher.final()]).toString("utf8")) as Record<string, string>;
}

export function isSealed(stored: Record<string, string>): boolean {
  return stored.enc === "A256GCM" && typeof stored.ct === "string";
}

export async function createSigningKey(db: Db, { organisationId }: { organisationId: string }) {
  const { publicKey, privateKey } = await generateKeyPair("EdDSA", { crv: "Ed25519", extractable: true });
  const [row] = await db
    .insert(organisationSigningKey)
    .values({
      organisationId,
      alg: "EdDSA",
      publicJwk: (await exportJWK(publicKey)) as Record<string, string>,
      privateJwk: sealJwk((await exportJWK(privateKey)) as Record<string, string>, organisationId),
    })
    .returning({ id: organisationSigningKey.id });
  return row.id;
}

async function loadActiveKey(db: Db, organisationId: string): Promise<SigningKey> {
  const [row] = await db
    .select({ id: organisationSigningKey.id, privateJwk: organisationSigningKey.privateJwk })
    .from(organisationSigningKey)
    .where(and(eq(organisationSigningKey.organisationId, organisationId), eq(organisationSigningKey.status, "active")))
    .orderBy(desc(organisationSigningKey.createdAt), asc(organisationSigningKey.id))
    .limit(1);
  if (!row) throw new Error(`organisation ${organisationId} has no active signing key`);
  const jwk = isSealed(row.privateJwk) ? openJwk(row.privateJwk as unknown as SealedJwk, organisationId) : row.privateJwk;
  return { kid: row.id, alg: "EdDSA", privateKey: await importJWK({ ...jwk, alg: "EdDSA" }, "EdDSA") };
}

/**
 * The organisation's active signing key, cached per process. `activeKid` (the config pull's
 * gate statement reads it) makes a rotation take effect at the next pull; without it the cached
 * key is used for KEY_CACHE_MS.
 */
export function loadSigningKey(db: Db, organisationId: string, activeKid?: string | null, now = Date.now()): Promise<SigningKey> {
  const cached = cache.get(organisationId);
  if (cached && (activeKid ? cached.kid === activeKid : now - cached.at < KEY_CACHE_MS)) return cached.key;
  const key = loadActiveKey(db, organisationId);
  key.catch(() => cache.delete(organisationId));
  cache.set(organisationId, { at: now, kid: activeKid ?? null, key });
  key.then((k) => {
    const entry = cache.get(organisationId);
    if (entry?.key === key) entry.kid = k.kid;
  }, () => undefined);
  return key;
}

/**
 * Rotate: the active key is retired (still published) and a new one becomes active. Runs in
 * one transaction (the partial unique index allows one active key per organisation).
 */
export async function rotateSigningKey(db: Db, { organisationId, actor }: { organisationId: string; actor: string }) {
  const result = await db.transaction(async (tx) => {
    const retired = await tx
      .update(organisationSigningKey)
      .set({ status: "retired", retiredAt: new Date() })
      .where(and(eq(organisationSigningKey.organisationId, organisationId), eq(organisationSigningKey.status, "active")))
      .returning({ id: organisationSigningKey.id });
    const id = await createSigningKey(tx, { organisationId });
    await recordAudit(tx, { organisationId, actor, action: "signing_key.rotated", targetType: "signing_key", targetId: id, detail: { retired: retired.map((r) => r.id) } });
    return { kid: id, retired: retired.map((r) => r.id) };
  });
  cache.delete(organisationId);
  return result;
}

/** Withdraw keys retired longer than the overlap from the JWKS (every organisation, or one). Idempotent. */
export async function withdrawRetiredSigningKeys(db: Db, { now = new Date(), overlapMs = SIGNING_KEY_OVERLAP_MS, organisationId }: { now?: Date; overlapMs?: number; organisationId?: string } = {}) {
  const rows = await db
    .update(organisationSigningKey)
    .set({ status: "withdrawn", withdrawnAt: now })
    .where(
      and(
        eq(organisationSigningKey.status, "retired"),
        lt(organisationSigningKey.retiredAt, new Date(now.getTime() - overlapMs)),
        organisationId ? eq(organisationSigningKey.organisationId, organisationId) : undefined,
      ),
    )
    .returning({ organisationId: organisationSigningKey.organisationId, id: organisationSigningKey.id });
  for (const row of rows) {
    await recordAudit(db, { organisationId: row.organisationId, actor: "system", action: "signing_key.withdrawn", targetType: "signing_key", targetId: row.id });
  }
  return rows.length;
}

/** The JWKS of an organisation by slug, or null when there is no such organisation. Reads only. */
export async function getOrganisationJwks(db: Db, slug: string) {
  const [org] = await db.select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, slug)).limit(1);
  if (!org) return null;
  const rows = await db
    .select({ id: organisationSigningKey.id, alg: organisationSigningKey.alg, publicJwk: organisationSigningKey.publicJwk })
    .from(organisationSigningKey)
    .where(and(eq(organisationSigningKey.organisationId, org.id), inArray(organisationSigningKey.status, ["active", "retired"])))
    .orderBy(asc(organisationSigningKey.createdAt));
  return { keys: rows.map((r) => ({ kty: r.publicJwk.kty, crv: r.publicJwk.crv, x: r.publicJwk.x, kid: r.id, alg: r.alg, use: "sig" })) };
}

/**
 * Bring stored keys up to date (run by scripts/migrate.ts after the SQL migrations): seal any
 * private key still stored in the clear, and give every organisation without a key its first.
 * Idempotent. Answers what it did.
 */
export async function upgradeSigningKeys(db: Db): Promise<{ sealed: number; created: number }> {
  let sealed = 0;
  const rows = await db.select({ organisationId: organisationSigningKey.organisationId, id: organisationSigningKey.id, privateJwk: organisationSigningKey.privateJwk }).from(organisationSigningKey);
  for (const row of rows) {
    if (isSealed(row.privateJwk)) continue;
    await db
      .update(organisationSigningKey)
      .set({ privateJwk: sealJwk(row.privateJwk, row.organisationId) })
      .where(and(eq(organisationSigningKey.organisationId, row.organisationId), eq(organisationSigningKey.id, row.id)));
    sealed += 1;
  }
  const keyless = await db
    .select({ id: organisation.id })
    .from(organisation)
    .where(notExists(db.select({ one: sql`1` }).from(organisationSigningKey).where(eq(organisationSigningKey.organisationId, organisation.id))));
  for (const org of keyless) await createSigningKey(db, { organisationId: org.id });
  return { sealed, created: keyless.length };
}
