// Authentication and scope for the management API (/api/v1/o/:slug/...): a session cookie
// or an organisation API token (`Authorization: Bearer fbk_...`).
// Answers are JSON errors, never redirects: 401 without a session or with a bad token, 404
// for a non-member or a token of another organisation (the same as an unknown organisation),
// 403 for a role or token scope without the capability.
import { and, eq } from "drizzle-orm";
import { bearerSecret, findApiToken } from "~/.server/auth/api-tokens";
import { getMembership, getSessionUser, type Membership } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { organisation } from "~/.server/db/schema";
import { apiError } from "~/.server/http/json";
import { env } from "~/.server/env";
import { tokenCan } from "~/lib/access/api-token-scope";
import { can, type Capability } from "~/lib/access/capabilities";

import { getSiteScope, type SiteScope } from "./scope";

export type ApiCaller = {
  organisation: Membership["organisation"];
  scope: SiteScope;
  /** For the audit log: the member's user id, or `token:<id>`. */
  actor: string;
  /** The member behind a session; null when an API token is calling. */
  membership: Membership | null;
};

/** A token sees every site of its own organisation and nothing of any other. */
async function fromToken(secret: string, slug: string | undefined, capability: Capability): Promise<ApiCaller> {
  const db = getDb();
  const token = await findApiToken(db, secret);
  if (!token) throw apiError(401, "invalid_token", "The API token is not valid or has been revoked.");
  const [org] = slug
    ? await db
        .select({ id: organisation.id, name: organisation.name, slug: organisation.slug })
        .from(organisation)
        .where(and(eq(organisation.id, token.organisationId), eq(organisation.slug, slug)))
        .limit(1)
    : [];
  if (!org) throw apiError(404, "not_found", "No such organisation.");
  if (!tokenCan(token.scope, capability)) throw apiError(403, "forbidden", "This token's scope does not allow this.");
  return { organisation: org, scope: { organisationId: org.id, siteIds: null }, actor: `token:${token.id}`, membership: null };
}

function trustedOrigins(): string[] {
  const settings = env();
  return [settings.BETTER_AUTH_URL, ...settings.TRUSTED_ORIGINS.split(",").map((o) => o.trim()).filter(Boolean)].map((o) => o.replace(/\/$/, ""));
}

export async function requireApiCaller(request: Request, slug: string | undefined, capability: Capability): Promise<ApiCaller> {
  // A bearer token is never combined with, nor falls back to, the session cookie. It is not
  // sent by browsers on their own, so the cross-site checks below are for cookies only.
  const secret = bearerSecret(request);
  if (secret !== null) return fromToken(secret, slug, capability);
  if (request.method !== "GET" && request.method !== "HEAD") {
    // Cookie-authenticated writes: same-origin only, JSON only (a cross-site form cannot send it).
    const origin = request.headers.get("origin");
    if (origin && !trustedOrigins().includes(origin.replace(/\/$/, ""))) throw apiError(403, "bad_origin", "Requests from this origin are not accepted.");
    const type = request.headers.get("content-type") ?? "";
    if (!/^application\/json\b/i.test(type)) throw apiError(415, "unsupported_media_type", "Send the body as application/json (an empty object is fine).");
  }
  const user = await getSessionUser(request);
  if (!user) throw apiError(401, "unauthenticated", "Sign in first.");
  const membership = slug ? await getMembership(user, slug) : null;
  if (!membership) throw apiError(404, "not_found", "No such organisation.");
  if (!can(membership.role, capability)) throw apiError(403, "forbidden", "Your role does not allow this.");
  const scope = await getSiteScope(getDb(), membership);
  return { organisation: membership.organisation, membership, scope, actor: membership.user.id };
}
