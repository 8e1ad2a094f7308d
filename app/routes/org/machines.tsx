import { Form, Link, useNavigation, useSearchParams } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listMachines } from "~/.server/fleet/machines";
import { MachineListQuerySchema } from "~/lib/fleet/schemas";
import { listRegistryOptions } from "~/.server/fleet/registry";
import { getSiteScope } from "~/.server/fleet/scope";
import { HEALTH_LABELS } from "~/components/fleet/health-badge";
import { MachinesTable } from "~/components/fleet/machines-table";
import { PageHeader } from "~/components/org-shell";
import { buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import { HEALTH_BANDS } from "~/lib/health";
import type { Route } from "./+types/machines";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const raw = Object.fromEntries(new URL(request.url).searchParams);
  const parsed = MachineListQuerySchema.safeParse(raw);
  // A hand-edited URL with a bad value falls back to the defaults and says so.
  const query = parsed.success ? parsed.data : MachineListQuerySchema.parse({});
  const [machines, options] = await Promise.all([listMachines(db, scope, query), listRegistryOptions(db, scope)]);
  return { machines, options, query, invalidQuery: !parsed.success, canManage: can(membership.role, "machines:manage"), slug: membership.organisation.slug };
}

const selectClass = "rounded-md border border-rule-strong bg-white px-2 py-1.5 text-sm";

/** One labelled filter of the machines table; the empty option means "no filter". */
function FilterSelect({ label, name, value, anyLabel, options }: { label: string; name: string; value: string | undefined; anyLabel: string; options: { value: string; label: string }[] }) {
  return (
    <label className="flex flex-col text-xs text-ink-faint">
      {label}
      <select name={name} defaultValue={value ?? ""} className={selectClass}>
        <option value="">{anyLabel}</option>
        {options.map((o) => <option key={o.value} value={o.value}>{o.label}</option>)}
      </select>
    </label>
  );
}

export default function Machines({ loaderData }: Route.ComponentProps) {
  const { machines, options, query, invalidQuery, canManage, slug } = loaderData;
  const [params] = useSearchParams();
  const busy = useNavigation().state === "loading";
  const pages = Math.max(1, Math.ceil(machines.total / machines.pageSize));
  const pageLink = (page: number) => {
    const copy = new URLSearchParams(params);
    copy.set("page", String(page));
    return `?${copy}`;
  };
  const filtered = Boolean(query.customerId || query.siteId || query.modelId || query.health || query.q || query.status);
  const sites = query.customerId ? options.sites.filter((s) => s.customerId === query.customerId) : options.sites;
  return (
    <>
      <PageHeader
        title="Machines"
        description="Every registered machine, its loops' health and whether its device is enrolled."
        action={
          canManage ? (
            <div className="flex flex-wrap gap-2">
              <Link to="import" className={buttonClass("secondary")}>Import from CSV</Link>
              <Link to="new" className={buttonClass("primary")}>Register machine</Link>
            </div>
          ) : null
        }
      />
      <div className="space-y-4 px-5 py-5 sm:px-8">
        {invalidQuery ? <Notice tone="info">Some filters in the address were not valid and were ignored.</Notice> : null}
        <Form method="get" className="flex flex-wrap items-end gap-2" aria-label="Filter machines">
          <input type="hidden" name="sort" value={query.sort} />
          <input type="hidden" name="dir" value={query.dir} />
          <label className="flex flex-col text-xs text-ink-faint">
            Search
            <input type="search" name="q" defaultValue={query.q ?? ""} placeholder="Serial, firmware, site…" className={`${selectClass} w-48`} />
          </label>
          <FilterSelect label="Customer" name="customerId" value={query.customerId} anyLabel="All customers" options={options.customers.map((c) => ({ value: c.id, label: c.name }))} />
          <FilterSelect label="Site" name="siteId" value={query.siteId} anyLabel="All sites" options={sites.map((s) => ({ value: s.id, label: s.name }))} />
          <FilterSelect label="Model" name="modelId" value={query.modelId} anyLabel="All models" options={options.models.map((m) => ({ value: m.id, label: m.name }))} />
          <FilterSelect label="Health" name="health" value={query.health} anyLabel="Any health" options={HEALTH_BANDS.map((b) => ({ value: b, label: HEALTH_LABELS[b] }))} />
          <label className="flex flex-col text-xs text-ink-faint">
            Per page
            <select name="pageSize" defaultValue={String(query.pageSize)} className={selectClass}>
              {[25, 50, 100, 200].map((n) => <option key={n} value={n}>{n}</option>)}
            </select>
          </label>
          <button className={buttonClass("secondary", "py-1.5")}>Apply</button>
          {filtered ? <Link to="?" className="px-2 py-1.5 text-sm text-accent hover:underline">Clear filters</Link> : null}
        </Form>

        <div className="flex items-baseline justify-between text-xs text-ink-faint">
          <span className="tabular" aria-live="polite">
            {busy ? "Loading…" : `${machines.total} ${machines.total === 1 ? "machine" : "machines"}${filtered ? " match" : ""}`}
          </span>
          {pages > 1 ? <span className="tabular">Page {machines.page} of {pages}</span> : null}
        </div>

        {machines.items.length === 0 ? (
          <div className="rounded-xl border border-dashed border-rule bg-white px-5 py-8 text-sm text-ink-soft">
            {filtered ? (
              <>No machine matches these filters. <Link to="?" className="link-in-text">Clear the filters</Link> to see the whole fleet.</>
            ) : canManage ? (
              <>No machines are registered yet. Register one to get a one-time enrolment code for its controller,. <Link to="new" className="link-in-text">Register a machine</Link></>
            ) : (
              <>No machines are visible to you yet. Machines appear here once your OEM registers them at your sites.</>
            )}
          </div>
        ) : (
          <MachinesTable slug={slug} rows={machines.items} sort={query.sort} dir={query.dir} />
        )}

        {pages > 1 ? (
          <nav aria-label="Pages" className="flex items-center justify-end gap-2 text-sm">
            {machines.page > 1 ? <Link to={pageLink(machines.page - 1)} className={buttonClass("secondary", "py-1")}>← Previous</Link> : null}
            {machines.page < pages ? <Link to={pageLink(machines.page + 1)} className={buttonClass("secondary", "py-1")}>Next →</Link> : null}
          </nav>
        ) : null}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Machines · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
