// Authentication and scope for the management API (/api/v1/o/:slug/...). Today a session
// cookie; organisation API tokens (`Authorization: Bearer fbk_...`) slot in at `fromToken`.
// Answers are JSON errors, never redirects: 401 without a session, 404 for a non-member (the
// same as an unknown organisation), 403 for a role without the capability.
import { getMembership, getSessionUser, type Membership } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { apiError, jsonResponse } from "~/.server/device-auth/http";
import { env } from "~/.server/env";
import { can, type Capability } from "~/lib/access/capabilities";
import { FleetRuleError } from "./errors";
import { getSiteScope, type SiteScope } from "./scope";

export type ApiCaller = { membership: Membership; scope: SiteScope; actor: string };

function trustedOrigins(): string[] {
  const settings = env();
  return [settings.BETTER_AUTH_URL, ...settings.TRUSTED_ORIGINS.split(",").map((o) => o.trim()).filter(Boolean)].map((o) => o.replace(/\/$/, ""));
}

export async function requireApiCaller(request: Request, slug: string | undefined, capability: Capability): Promise<ApiCaller> {
  const authorization = request.headers.get("authorization");
  if (authorization?.startsWith("Bearer ")) {
    // Organisation API tokens are not issued yet; refuse rather than fall back to cookies.
    throw apiError(401, "invalid_token", "API tokens are not enabled for this organisation yet.");
  }
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
  return { membership, scope, actor: membership.user.id };
}

/** Run a management API handler: domain errors become JSON answers, surprises a JSON 500. */
export async function handleApi(run: () => Promise<Response | unknown>): Promise<Response> {
  try {
    const result = await run();
    return result instanceof Response ? result : jsonResponse(result);
  } catch (error) {
    if (error instanceof Response) return error;
    if (error instanceof FleetRuleError) return apiError(error.status, error.code, error.message, error.issues as never);
    console.error(error);
    return apiError(500, "internal_error", "Something went wrong on our side.");
  }
}

export function methodNotAllowed(allow: string): Response {
  return apiError(405, "method_not_allowed", `Use ${allow}.`, undefined, { allow });
}
