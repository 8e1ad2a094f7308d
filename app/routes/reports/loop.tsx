// A loop's health report, printable (no navigation; outside the organisation layout).
import { data } from "react-router";
import { loadHealthReport } from "./report.server";
import { HealthReport } from "~/components/health/health-report";
import type { Route } from "./+types/loop";

export async function loader({ request, params }: Route.LoaderArgs) {
  const report = await loadHealthReport(request, params.slug, { loopId: params.id });
  if (!report) throw data({ message: "No such loop." }, { status: 404 });
  return report;
}

export default function LoopReport({ loaderData: r, params }: Route.ComponentProps) {
  const row = r.rows[0];
  return (
    <HealthReport
      title={row ? `Health report: ${row.machineSerial}, ${row.loopName}` : "Health report"}
      subtitle={row ? `${row.customer} · ${row.site} · loop ${row.loopKey}` : ""}
      organisation={r.organisation}
      generatedAt={r.generatedAt}
      rows={r.rows}
      csvHref={`/o/${params.slug}/reports/loop/${params.id}/csv`}
      backHref={row ? `/o/${params.slug}/machines/${r.machineId}?loop=${params.id}` : `/o/${params.slug}`}
      backLabel={row ? `Back to ${row.machineSerial}` : "Back"}
    />
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [{ title: `${d?.rows[0] ? `${d.rows[0].machineSerial} ${d.rows[0].loopKey} health report` : "Health report"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
