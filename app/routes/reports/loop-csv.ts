// GET /o/:slug/reports/loop/:id/csv: a loop's health report as CSV, through toCsv (formula cells neutralised).
import { data } from "react-router";
import { healthReportCsv } from "~/.server/health/report";
import { loadHealthReport, reportFileName } from "./report.server";
import type { Route } from "./+types/loop-csv";

export async function loader({ request, params }: Route.LoaderArgs) {
  const loaded = await loadHealthReport(request, params.slug, { loopId: params.id });
  if (!loaded) throw data({ message: "No such loop." }, { status: 404 });
  const { report } = loaded;
  const loop = report.loops[0];
  const name = reportFileName(["loop", loop?.machineSerial ?? "", loop?.loopKey ?? "", report.generatedAt.slice(0, 10)]);
  return new Response(healthReportCsv(report), {
    headers: { "content-type": "text/csv; charset=utf-8", "content-disposition": `attachment; filename="${name}"`, "cache-control": "no-store" },
  });
}
