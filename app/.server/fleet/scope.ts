// Site scope: site managers see only the sites assigned to them.
import { and, eq } from "drizzle-orm";
import type { Membership } from "~/.server/auth/guards";
import type { Db } from "~/.server/db/client";
import { siteAssignment } from "~/.server/db/schema";
import { isSiteScoped } from "~/lib/access/capabilities";

/** null = every site of the organisation; otherwise the only site ids this member may see. */
export type SiteScope = { organisationId: string; siteIds: string[] | null };

export async function getSiteScope(db: Db, membership: Pick<Membership, "organisation" | "memberId" | "role">): Promise<SiteScope> {
  const organisationId = membership.organisation.id;
  if (!isSiteScoped(membership.role)) return { organisationId, siteIds: null };
  const rows = await db
    .select({ siteId: siteAssignment.siteId })
    .from(siteAssignment)
    .where(and(eq(siteAssignment.organisationId, organisationId), eq(siteAssignment.memberId, membership.memberId)));
  return { organisationId, siteIds: rows.map((r) => r.siteId) };
}

export function inScope(scope: SiteScope, siteId: string): boolean {
  return scope.siteIds === null || scope.siteIds.includes(siteId);
}
