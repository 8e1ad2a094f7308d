// What the report pages and their CSV share: the member's tenant, role and site scope, and the
// report's rows in the shape the page and the CSV writer take.
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { getSiteScope } from "~/.server/fleet/scope";
import { getHealthReport } from "~/.server/health/report";
import type { HealthReportRow } from "~/lib/health/report-csv";

export type ReportPageData = {
  organisation: string;
  generatedAt: string;
  machineId: string | null;
  siteName: string | null;
  customerName: string | null;
  rows: HealthReportRow[];
};

/** null when the loop or site is not the organisation's or not in the member's site scope. */
export async function loadHealthReport(request: Request, slug: string, target: { loopId: string } | { siteId: string }): Promise<ReportPageData | null> {
  const membership = await requireCapableMember(request, slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const report = await getHealthReport(db, scope, target);
  if (!report) return null;
  return { organisation: membership.organisation.name, ...toReportPage(report) };
}

/** A file name of plain characters: letters, digits, dot, dash. */
export function reportFileName(parts: string[]): string {
  const stem = parts
    .filter(Boolean)
    .map((p) => p.replace(/[^A-Za-z0-9.-]+/g, "-").replace(/^-+|-+$/g, ""))
    .filter(Boolean)
    .join("_");
  return `flyball-health_${stem || "report"}.csv`;
}
