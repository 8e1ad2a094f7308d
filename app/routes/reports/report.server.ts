// What the report pages and their CSV share: the member's tenant, role and site scope, then the
// report (another organisation's or another site's loop or site, or a malformed id: null → 404).
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { getSiteScope } from "~/.server/fleet/scope";
import { getHealthReport, type HealthReport } from "~/.server/health/report";
import { DomainError } from "~/lib/errors";

export async function loadHealthReport(request: Request, slug: string, target: { loopId: string } | { siteId: string }): Promise<{ organisation: string; report: HealthReport } | null> {
  const membership = await requireCapableMember(request, slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  try {
    return { organisation: membership.organisation.name, report: await getHealthReport(db, scope, target) };
  } catch (error) {
    if (error instanceof DomainError && error.status === 404) return null;
    throw error;
  }
}

/** A file name of plain characters (letters, digits, dot, dash), whatever a serial holds. */
export function reportFileName(parts: string[]): string {
  const stem = parts
    .map((p) => p.replace(/[^A-Za-z0-9.-]+/g, "-").replace(/^-+|-+$/g, ""))
    .filter(Boolean)
    .join("_");
  return `flyball-health_${stem || "report"}.csv`;
}
