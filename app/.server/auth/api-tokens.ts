// Organisation API tokens for the management API: issue, list, revoke, and find by secret.
// A token is `fbk_` + 32 random bytes in base64url. Only its SHA-256 is stored, with a short
// prefix for display; the secret is returned once, by `createApiToken`, and never again.
import { DomainError } from "~/lib/errors";
import { createHash, randomBytes } from "node:crypto";
import { and, desc, eq, isNull, lt, or, sql } from "drizzle-orm";
import { z } from "zod";
import type { Membership } from "~/.server/auth/guards";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { apiToken, member, user } from "~/.server/db/schema";
import { can } from "~/lib/access/capabilities";
import { TOKEN_SCOPES, type TokenScope } from "~/lib/access/api-token-scope";

const TOKEN_PATTERN = /^fbk_[A-Za-z0-9_-]{43}$/;
const PREFIX_LENGTH = 8;
/** `last_used_at` is a hint for people, not a log: one write a minute per token is enough. */
const TOUCH_INTERVAL_MS = 60_000;

export const CreateApiTokenSchema = z.object({
  name: z.string("Give the token a name.").trim().min(1, "Give the token a name.").max(80, "Keep the name under 80 characters."),
  scope: z.enum(TOKEN_SCOPES, "Choose read or write."),
  /** Days until the token stops working; blank for no expiry. */
  expiresInDays: z.preprocess(
    (value) => (value === "" || value === null ? undefined : value),
    z.coerce.number("Enter a number of days.").int("Enter whole days.").min(1, "At least 1 day.").max(730, "At most 730 days.").optional(),
  ),
});

export function hashApiToken(secret: string): string {
  return createHash("sha256").update(secret).digest("hex");
}

/** Whether a string has the shape of a token, checked before any database work. */
export function looksLikeApiToken(secret: string): boolean {
  return TOKEN_PATTERN.test(secret);
}

export async function createApiToken(db: Db, actor: Membership, input: z.infer<typeof CreateApiTokenSchema>) {
  const secret = `fbk_${randomBytes(32).toString("base64url")}`;
  const prefix = secret.slice(4, 4 + PREFIX_LENGTH);
  const expiresAt = input.expiresInDays ? new Date(Date.now() + input.expiresInDays * 86_400_000) : null;
  const [row] = await db
    .insert(apiToken)
    .values({ organisationId: actor.organisation.id, name: input.name, scope: input.scope, tokenHash: hashApiToken(secret), prefix, createdBy: actor.user.id, expiresAt })
    .returning({ id: apiToken.id });
  await recordAudit(db, { organisationId: actor.organisation.id, actor: actor.user.id, action: "api_token.created", targetType: "api_token", targetId: row!.id, detail: { name: input.name, scope: input.scope, prefix, expiresAt: expiresAt?.toISOString() ?? null } });
  return { id: row!.id, name: input.name, scope: input.scope, prefix, secret, expiresAt };
}

export async function listApiTokens(db: Db, { organisationId }: { organisationId: string }) {
  return db
    .select({
      id: apiToken.id,
      name: apiToken.name,
      scope: apiToken.scope,
      prefix: apiToken.prefix,
      createdAt: apiToken.createdAt,
      lastUsedAt: apiToken.lastUsedAt,
      expiresAt: apiToken.expiresAt,
      revokedAt: apiToken.revokedAt,
      createdBy: sql<string>`coalesce(${user.name}, 'Former member')`,
    })
    .from(apiToken)
    .leftJoin(user, eq(user.id, apiToken.createdBy))
    .where(eq(apiToken.organisationId, organisationId))
    .orderBy(sql`${apiToken.revokedAt} is not null`, desc(apiToken.createdAt));
}

export async function revokeApiToken(db: Db, actor: Membership, tokenId: string) {
  const [row] = await db
    .update(apiToken)
    .set({ revokedAt: new Date(), revokedBy: actor.user.id })
    .where(and(eq(apiToken.organisationId, actor.organisation.id), eq(apiToken.id, tokenId), isNull(apiToken.revokedAt)))
    .returning({ id: apiToken.id, name: apiToken.name, prefix: apiToken.prefix });
  if (!row) throw new DomainError("not_found", "That token does not exist or is already revoked.", { status: 404 });
  await recordAudit(db, { organisationId: actor.organisation.id, actor: actor.user.id, action: "api_token.revoked", targetType: "api_token", targetId: row.id, detail: { name: row.name, prefix: row.prefix } });
}

export type ApiTokenHolder = { id: string; organisationId: string; scope: TokenScope | string; name: string };

/**
 * The live token behind a secret, or null: malformed, unknown, revoked, expired, or its
 * creator is no longer a member allowed to hold tokens (left, or lost members:manage). Marks
 * it used, at most once a minute, and only when the row read shows it is due.
 */
export async function findApiToken(db: Db, secret: string, now = new Date()): Promise<ApiTokenHolder | null> {
  if (!looksLikeApiToken(secret)) return null;
  const [row] = await db
    .select({
      id: apiToken.id,
      organisationId: apiToken.organisationId,
      scope: apiToken.scope,
      name: apiToken.name,
      lastUsedAt: apiToken.lastUsedAt,
      revokedAt: apiToken.revokedAt,
      expiresAt: apiToken.expiresAt,
      creatorRole: member.role,
    })
    .from(apiToken)
    .leftJoin(member, and(eq(member.organizationId, apiToken.organisationId), eq(member.userId, apiToken.createdBy)))
    .where(eq(apiToken.tokenHash, hashApiToken(secret)))
    .limit(1);
  if (!row || row.revokedAt) return null;
  if (row.expiresAt && row.expiresAt.getTime() <= now.getTime()) return null;
  if (!can(row.creatorRole, "members:manage")) return null;
  if (!row.lastUsedAt || now.getTime() - row.lastUsedAt.getTime() >= TOUCH_INTERVAL_MS) {
    const due = new Date(now.getTime() - TOUCH_INTERVAL_MS);
    // The condition repeats the check so concurrent requests write once between them.
    await db
      .update(apiToken)
      .set({ lastUsedAt: now })
      .where(and(eq(apiToken.organisationId, row.organisationId), eq(apiToken.id, row.id), or(isNull(apiToken.lastUsedAt), lt(apiToken.lastUsedAt, due))));
  }
  return { id: row.id, organisationId: row.organisationId, scope: row.scope, name: row.name };
}

/** The secret of an `Authorization: Bearer ...` header, or null when there is none. */
export function bearerSecret(request: Request): string | null {
  const authorization = request.headers.get("authorization");
  if (!authorization || !/^bearer\s/i.test(authorization)) return null;
  return authorization.replace(/^bearer\s+/i, "").trim();
}
