// GET /o/:slug/reports/site/:id/csv: a site's health report as CSV, through toCsv (formula cells neutralised).
import { data } from "react-router";
import { healthReportCsv } from "~/.server/health/report";
import { loadHealthReport, reportFileName } from "./report.server";
import type { Route } from "./+types/site-csv";

export async function loader({ request, params }: Route.LoaderArgs) {
  const loaded = await loadHealthReport(request, params.slug, { siteId: params.id });
  if (!loaded) throw data({ message: "No such site." }, { status: 404 });
  const { report } = loaded;
  const name = reportFileName(["site", report.siteName, report.generatedAt.slice(0, 10)]);
  return new Response(healthReportCsv(report), {
    headers: { "content-type": "text/csv; charset=utf-8", "content-disposition": `attachment; filename="${name}"`, "cache-control": "no-store" },
  });
}
