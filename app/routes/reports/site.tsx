// A site's health report, printable (no navigation; outside the organisation layout).
import { data } from "react-router";
import { loadHealthReport } from "./report.server";
import { HealthReport } from "~/components/health/health-report";
import type { Route } from "./+types/site";

export async function loader({ request, params }: Route.LoaderArgs) {
  const report = await loadHealthReport(request, params.slug, { siteId: params.id });
  if (!report) throw data({ message: "No such site." }, { status: 404 });
  return report;
}

export default function SiteReport({ loaderData: r, params }: Route.ComponentProps) {
  return (
    <HealthReport
      title={`Health report: ${r.siteName ?? "site"}`}
      subtitle={`${r.customerName ?? ""} · every loop of every machine in service at this site, worst first`}
      organisation={r.organisation}
      generatedAt={r.generatedAt}
      rows={r.rows}
      csvHref={`/o/${params.slug}/reports/site/${params.id}/csv`}
      backHref={`/o/${params.slug}?siteId=${params.id}`}
      backLabel="Back to the overview"
    />
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [{ title: `${d?.siteName ?? "Site"} health report · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
