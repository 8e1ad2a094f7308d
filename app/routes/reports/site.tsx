// A site's health report, printable (outside the organisation layout: no navigation).
import { data } from "react-router";
import { HealthReport } from "~/components/health/health-report";
import { loadHealthReport } from "./report.server";
import type { Route } from "./+types/site";

export async function loader({ request, params }: Route.LoaderArgs) {
  const loaded = await loadHealthReport(request, params.slug, { siteId: params.id });
  if (!loaded) throw data({ message: "No such site." }, { status: 404 });
  return loaded;
}

export default function SiteReport({ loaderData: { report, organisation }, params }: Route.ComponentProps) {
  return (
    <HealthReport
      report={report}
      organisation={organisation}
      csvHref={`/o/${params.slug}/reports/site/${params.id}/csv`}
      backHref={`/o/${params.slug}?siteId=${params.id}`}
      backLabel="Back to the overview"
    />
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [{ title: `${d?.report.title ?? "Health report"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
