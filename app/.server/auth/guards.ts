// Server guards: each proves something about the request or throws a response.
// `get*` may return null, `require*` throws (redirect, 403 or 404).
import { and, eq } from "drizzle-orm";
import { data, redirect } from "react-router";
import { getDb } from "~/.server/db/client";
import { member, organisation } from "~/.server/db/schema";
import { can, type Capability, type Role, isRole } from "~/lib/access/capabilities";
import { getAuth } from "./auth";

export type SessionUser = { id: string; name: string; email: string; emailVerified: boolean };

export type Membership = {
  user: SessionUser;
  organisation: { id: string; name: string; slug: string };
  memberId: string;
  role: Role;
};

const sessionCache = new WeakMap<Request, Promise<SessionUser | null>>();
const membershipCache = new WeakMap<Request, Map<string, Promise<Membership | null>>>();

/** The signed-in user of this request, or null. Looked up once per request. */
export function getSessionUser(request: Request): Promise<SessionUser | null> {
  let pending = sessionCache.get(request);
  if (!pending) {
    pending = getAuth()
      .api.getSession({ headers: request.headers })
      .then((result) =>
        result
          ? {
              id: result.user.id,
              name: result.user.name,
              email: result.user.email,
              emailVerified: result.user.emailVerified,
            }
          : null,
      );
    sessionCache.set(request, pending);
  }
  return pending;
}

export async function requireUser(request: Request): Promise<SessionUser> {
  const user = await getSessionUser(request);
  if (!user) {
    const url = new URL(request.url);
    throw redirect(`/sign-in?next=${encodeURIComponent(url.pathname + url.search)}`);
  }
  return user;
}

/** Membership of `userId` in the organisation with `slug`, or null when either is missing. */
export async function getMembership(user: SessionUser, slug: string): Promise<Membership | null> {
  const [row] = await getDb()
    .select({
      organisationId: organisation.id,
      name: organisation.name,
      slug: organisation.slug,
      memberId: member.id,
      role: member.role,
    })
    .from(organisation)
    .innerJoin(member, and(eq(member.organizationId, organisation.id), eq(member.userId, user.id)))
    .where(eq(organisation.slug, slug))
    .limit(1);
  if (!row || !isRole(row.role)) return null;
  return {
    user,
    organisation: { id: row.organisationId, name: row.name, slug: row.slug },
    memberId: row.memberId,
    role: row.role,
  };
}

/**
 * The caller's membership in the organisation named by the URL. A non-member gets 404,
 * the same answer as for an organisation that does not exist, so slugs cannot be probed.
 */
export async function requireMembership(request: Request, slug: string | undefined): Promise<Membership> {
  const user = await requireUser(request);
  if (!slug) throw data({ message: "Not found" }, { status: 404 });
  let perRequest = membershipCache.get(request);
  if (!perRequest) membershipCache.set(request, (perRequest = new Map()));
  let pending = perRequest.get(slug);
  if (!pending) perRequest.set(slug, (pending = getMembership(user, slug)));
  const membership = await pending;
  if (!membership) throw data({ message: "Not found" }, { status: 404 });
  return membership;
}

export function requireCapability(membership: Membership, capability: Capability): Membership {
  if (!can(membership.role, capability)) {
    throw data({ message: "Your role does not allow this." }, { status: 403 });
  }
  return membership;
}

/** Membership plus a capability, the common case for pages and actions. */
export async function requireCapableMember(
  request: Request,
  slug: string | undefined,
  capability: Capability,
): Promise<Membership> {
  return requireCapability(await requireMembership(request, slug), capability);
}
