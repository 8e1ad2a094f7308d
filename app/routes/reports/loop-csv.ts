// GET /o/:slug/reports/loop/:id/csv: a loop's health report as CSV (formula cells neutralised).
import { data } from "react-router";
import { loadHealthReport, reportFileName } from "./report.server";
import { healthReportCsv } from "~/lib/health/report-csv";
import type { Route } from "./+types/loop-csv";

export async function loader({ request, params }: Route.LoaderArgs) {
  const report = await loadHealthReport(request, params.slug, { loopId: params.id });
  if (!report) throw data({ message: "No such loop." }, { status: 404 });
  const name = reportFileName(["loop", report.rows[0]?.machineSerial ?? "", report.rows[0]?.loopKey ?? "", report.generatedAt]);
  return new Response(healthReportCsv(report.rows), {
    headers: { "content-type": "text/csv; charset=utf-8", "content-disposition": `attachment; filename="${name}"`, "cache-control": "no-store" },
  });
}
