// GET /o/:slug/reports/site/:id/csv: a site's health report as CSV (formula cells neutralised).
import { data } from "react-router";
import { loadHealthReport, reportFileName } from "./report.server";
import { healthReportCsv } from "~/lib/health/report-csv";
import type { Route } from "./+types/site-csv";

export async function loader({ request, params }: Route.LoaderArgs) {
  const report = await loadHealthReport(request, params.slug, { siteId: params.id });
  if (!report) throw data({ message: "No such site." }, { status: 404 });
  const name = reportFileName(["site", report.siteName ?? "", report.generatedAt]);
  return new Response(healthReportCsv(report.rows), {
    headers: { "content-type": "text/csv; charset=utf-8", "content-disposition": `attachment; filename="${name}"`, "cache-control": "no-store" },
  });
}
