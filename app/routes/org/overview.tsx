// The fleet overview. The loader answers the first paint; TanStack Query then keeps the same
// answer fresh from GET /api/v1/o/:slug/overview (the loader's data as `initialData`).
import { keepPreviousData, useQuery } from "@tanstack/react-query";
import { Form, Link, useLocation, useNavigation } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listRegistryOptions } from "~/.server/fleet/registry";
import { getSiteScope } from "~/.server/fleet/scope";
import { getOverview } from "~/.server/health/overview";
import { fetchJson, FilterSelect } from "~/components/health/filter-select";
import { OverviewPanels } from "~/components/health/overview-panels";
import { PageHeader } from "~/components/org-shell";
import { buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can, ROLE_LABELS } from "~/lib/access/capabilities";
import { OverviewQuerySchema, type Overview as OverviewAnswer } from "~/lib/health/api-types";
import type { Route } from "./+types/overview";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const parsed = OverviewQuerySchema.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  const query = parsed.success ? parsed.data : {};
  const [overview, options] = await Promise.all([getOverview(db, scope, query), listRegistryOptions(db, scope)]);
  return {
    organisation: membership.organisation,
    role: membership.role,
    siteScoped: scope.siteIds !== null,
    overview,
    options,
    query,
    invalidQuery: !parsed.success,
    canRegister: can(membership.role, "machines:manage"),
  };
}

export default function OverviewPage({ loaderData }: Route.ComponentProps) {
  const { organisation, role, siteScoped, options, query, invalidQuery, canRegister } = loaderData;
  const base = `/o/${organisation.slug}`;
  const search = useLocation().search.replace(/^\?/, "");
  const navigating = useNavigation().state === "loading";
  const live = useQuery({
    queryKey: ["overview", organisation.slug, search],
    queryFn: () => fetchJson<OverviewAnswer>(`/api/v1/o/${organisation.slug}/overview${search ? `?${search}` : ""}`, "overview"),
    initialData: loaderData.overview,
    placeholderData: keepPreviousData,
    refetchInterval: 30_000,
  });
  const overview = live.data ?? loaderData.overview;
  const { machines } = overview;
  const total = machines.act + machines.watch + machines.silent + machines.steady;
  const filtered = Boolean(query.customerId || query.siteId || query.modelId);
  const sites = query.customerId ? options.sites.filter((s) => s.customerId === query.customerId) : options.sites;
  return (
    <>
      <PageHeader
        title={organisation.name}
        description={`Loop health of ${siteScoped ? "the machines at your sites" : "the fleet"} · you are ${ROLE_LABELS[role].toLowerCase()} here.`}
        action={
          <>
            <Link to={`${base}/findings?state=open`} className={buttonClass("secondary")}>Open findings</Link>
            <Link to={`${base}/machines`} className={buttonClass("secondary")}>All machines</Link>
          </>
        }
      />
      <div className="space-y-5 px-5 py-6 sm:px-8">
        {invalidQuery ? <Notice tone="info">Some filters in the address were not valid and were ignored.</Notice> : null}
        <Form method="get" className="flex flex-wrap items-end gap-2" aria-label="Filter the overview">
          <FilterSelect label="Customer" name="customerId" value={query.customerId} anyLabel="All customers" options={options.customers.map((c) => ({ value: c.id, label: c.name }))} />
          <FilterSelect label="Site" name="siteId" value={query.siteId} anyLabel="All sites" options={sites.map((s) => ({ value: s.id, label: `${s.name} (${s.customerName})` }))} />
          <FilterSelect label="Model" name="modelId" value={query.modelId} anyLabel="All models" options={options.models.map((m) => ({ value: m.id, label: m.name }))} />
          <button className={buttonClass("secondary", "py-1.5")}>Apply</button>
          {filtered ? <Link to="?" className="px-2 py-1.5 text-sm text-accent hover:underline">Clear filters</Link> : null}
          <p className="ml-auto text-xs text-ink-faint" aria-live="polite">
            {navigating
              ? "Loading…"
              : live.isError
                ? (live.error as Error).message
                : live.isFetchedAfterMount
                  ? `Refreshed ${new Date(live.dataUpdatedAt).toLocaleTimeString("en-GB", { timeZone: "UTC" })} UTC; again every 30 s`
                  : "Refreshes every 30 s"}
          </p>
        </Form>

        {total === 0 && !filtered ? (
          <div className="rounded-xl border border-dashed border-rule bg-white px-6 py-10">
            <h2 className="font-semibold">No machines in service yet</h2>
            <p className="mt-2 max-w-xl text-sm text-ink-soft">
              Once machines are registered and their devices post digests, this page shows which loops are steady, which need watching and which need action.
            </p>
            {canRegister ? <Link to={`${base}/machines/new`} className={buttonClass("primary", "mt-4")}>Register a machine</Link> : null}
          </div>
        ) : total === 0 ? (
          <p className="rounded-xl border border-dashed border-rule bg-white px-5 py-8 text-sm text-ink-soft">
            No machine matches these filters. <Link to="?" className="link-in-text">Clear the filters</Link> to see everything.
          </p>
        ) : (
          <OverviewPanels overview={overview} base={base} search={search} />
        )}
        {options.sites.length ? (
          <section aria-labelledby="reports-heading" className="rounded-xl border border-rule bg-white p-4">
            <h2 id="reports-heading" className="font-semibold">Health reports</h2>
            <p className="mt-1 text-xs text-ink-faint">Every loop of a site on one printable page, or as CSV for a spreadsheet.</p>
            <ul className="mt-2 flex flex-wrap gap-x-4 gap-y-1 text-sm">
              {options.sites.map((s) => (
                <li key={s.id}>
                  <a href={`${base}/reports/site/${s.id}`} className="text-accent hover:underline">{s.name}</a>
                  <span className="text-ink-faint"> · {s.customerName} · </span>
                  <a href={`${base}/reports/site/${s.id}/csv`} className="text-accent hover:underline" aria-label={`${s.name} report as CSV`}>CSV</a>
                </li>
              ))}
            </ul>
          </section>
        ) : null}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.organisation.name ?? "Overview"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
