// A loop's health report, printable (outside the organisation layout: no navigation).
import { data } from "react-router";
import { HealthReport } from "~/components/health/health-report";
import { loadHealthReport } from "./report.server";
import type { Route } from "./+types/loop";

export async function loader({ request, params }: Route.LoaderArgs) {
  const loaded = await loadHealthReport(request, params.slug, { loopId: params.id });
  if (!loaded) throw data({ message: "No such loop." }, { status: 404 });
  return loaded;
}

export default function LoopReport({ loaderData: { report, organisation }, params }: Route.ComponentProps) {
  const loop = report.loops[0];
  return (
    <HealthReport
      report={report}
      organisation={organisation}
      csvHref={`/o/${params.slug}/reports/loop/${params.id}/csv`}
      backHref={`/o/${params.slug}/machines/${loop.machineId}?loop=${loop.loopId}`}
      backLabel={`Back to ${loop.machineSerial}`}
    />
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [{ title: `${d?.report.title ?? "Health report"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
