import { Form, Link, useNavigation, useSearchParams } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listMachines, MachineListQuerySchema } from "~/.server/fleet/machines";
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

const selectClass = "rounded-md border border-rule bg-white px-2 py-1.5 text-sm";

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
          <label className="flex flex-col text-xs text-ink-faint">
            Customer
            <select name="customerId" defaultValue={query.customerId ?? ""} className={selectClass}>
              <option value="">All customers</option>
              {options.customers.map((c) => <option key={c.id} value={c.id}>{c.name}</option>)}
            </select>
          </label>
          <label className="flex flex-col text-xs text-ink-faint">
            Site
            <select name="siteId" defaultValue={query.siteId ?? ""} className={selectClass}>
              <option value="">All sites</option>
              {sites.map((s) => <option key={s.id} value={s.id}>{s.name}</option>)}
            </select>
          </label>
          <label className="flex flex-col text-xs text-ink-faint">
            Model
            <select name="modelId" defaultValue={query.modelId ?? ""} className={selectClass}>
              <option value="">All models</option>
              {options.models.map((m) => <option key={m.id} value={m.id}>{m.name}</option>)}
            </select>
          </label>
          <label className="flex flex-col text-xs text-ink-faint">
            Health
            <select name="health" defaultValue={query.health ?? ""} className={selectClass}>
              <option value="">Any health</option>
              {HEALTH_BANDS.map((b) => <option key={b} value={b}>{HEALTH_LABELS[b]}</option>)}
            </select>
          </label>
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
              <>No machine matches these filters. <Link to="?" className="text-accent hover:underline">Clear the filters</Link> to see the whole fleet.</>
            ) : canManage ? (
              <>No machines are registered yet. Register one to get a one-time enrolment code for its controller,. <Link to="new" className="text-accent hover:underline">Register a machine</Link></>
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
