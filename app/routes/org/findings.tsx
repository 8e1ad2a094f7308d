// Findings: a server-sorted, server-filtered, paged table whose state lives in the URL (the
// loader reads the search params; the table and filters only change them), with bulk
// acknowledgement for roles that may triage.
import { data, Form, Link, useNavigation, useSearchParams } from "react-router";
import { z } from "zod";
import { requireCapability, requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listMachines } from "~/.server/fleet/machines";
import { listRegistryOptions } from "~/.server/fleet/registry";
import { getSiteScope } from "~/.server/fleet/scope";
import { acknowledgeFindings, listFindings } from "~/.server/health/findings";
import { actionFailure } from "~/.server/http/errors";
import { FilterSelect, selectClass } from "~/components/health/filter-select";
import { FindingsTable } from "~/components/health/findings-table";
import { KIND_LABELS, SEVERITY_LABELS, STATE_LABELS } from "~/components/health/words";
import { PageHeader } from "~/components/org-shell";
import { buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import { MachineListQuerySchema } from "~/lib/fleet/schemas";
import { AcknowledgeSchema, FINDING_KINDS, FINDING_SEVERITIES, FINDING_STATES, FindingsQuerySchema } from "~/lib/health/api-types";
import type { Route } from "./+types/findings";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const parsed = FindingsQuerySchema.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  const query = parsed.success ? parsed.data : FindingsQuerySchema.parse({});
  // The machine filter offers the machines of the chosen customer or site (at most 200, by serial).
  const machineQuery = MachineListQuerySchema.parse({ customerId: query.customerId, siteId: query.siteId, sort: "serial", pageSize: 200 });
  const [findings, options, machines] = await Promise.all([listFindings(db, scope, query), listRegistryOptions(db, scope), listMachines(db, scope, machineQuery)]);
  return { findings, options, machines: machines.items.map((m) => ({ id: m.id, serial: m.serial })), query, invalidQuery: !parsed.success, canTriage: can(membership.role, "findings:triage"), slug: membership.organisation.slug };
}

const BulkSchema = AcknowledgeSchema.extend({ ids: z.array(z.string().uuid()).min(1, "Select at least one finding.").max(200) });

type ActionResult = { ok: boolean; message: string };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = requireCapability(await requireCapableMember(request, params.slug, "fleet:read"), "findings:triage");
  const form = await request.formData();
  if (form.get("intent") !== "acknowledge") return data<ActionResult>({ ok: false, message: "Unknown action." }, { status: 400 });
  const comment = String(form.get("comment") ?? "");
  const parsed = BulkSchema.safeParse({ ids: form.getAll("ids").map(String), comment: comment || undefined });
  if (!parsed.success) return data<ActionResult>({ ok: false, message: parsed.error.issues[0]?.message ?? "Check the selection." }, { status: 400 });
  const db = getDb();
  try {
    const { acknowledged: count } = await acknowledgeFindings(db, await getSiteScope(db, membership), membership.user.id, parsed.data.ids, parsed.data.comment);
    return data<ActionResult>({ ok: true, message: `${count} ${count === 1 ? "finding" : "findings"} acknowledged.` });
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

export default function FindingsPage({ loaderData, actionData }: Route.ComponentProps) {
  const { findings, options, machines, query, invalidQuery, canTriage, slug } = loaderData;
  const [params] = useSearchParams();
  const busy = useNavigation().state === "loading";
  const pages = Math.max(1, Math.ceil(findings.total / findings.pageSize));
  const pageLink = (page: number) => {
    const copy = new URLSearchParams(params);
    copy.set("page", String(page));
    return `?${copy}`;
  };
  const filtered = Boolean(query.state || query.kind || query.severity || query.customerId || query.siteId || query.machineId || query.loopId);
  const sites = query.customerId ? options.sites.filter((s) => s.customerId === query.customerId) : options.sites;
  const withoutLoop = () => {
    const copy = new URLSearchParams(params);
    copy.delete("loopId");
    copy.delete("page");
    return `?${copy}`;
  };
  return (
    <>
      <PageHeader title="Findings" description="What Flyball concluded from the loops' digests: drift, windup, saturation, oscillation, silence and refused gains. Open ones first need a look; acknowledge to say someone is on it." />
      <div className="space-y-4 px-5 py-5 sm:px-8">
        {invalidQuery ? <Notice tone="info">Some filters in the address were not valid and were ignored.</Notice> : null}
        {actionData ? <Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice> : null}
        <Form method="get" className="flex flex-wrap items-end gap-2" aria-label="Filter findings">
          <input type="hidden" name="sort" value={query.sort} />
          <input type="hidden" name="dir" value={query.dir} />
          {query.loopId ? <input type="hidden" name="loopId" value={query.loopId} /> : null}
          <FilterSelect label="State" name="state" value={query.state} anyLabel="Any state" options={FINDING_STATES.map((s) => ({ value: s, label: STATE_LABELS[s] }))} />
          <FilterSelect label="Kind" name="kind" value={query.kind} anyLabel="Any kind" options={FINDING_KINDS.map((k) => ({ value: k, label: KIND_LABELS[k] }))} />
          <FilterSelect label="Severity" name="severity" value={query.severity} anyLabel="Any severity" options={FINDING_SEVERITIES.map((s) => ({ value: s, label: SEVERITY_LABELS[s] }))} />
          <FilterSelect label="Customer" name="customerId" value={query.customerId} anyLabel="All customers" options={options.customers.map((c) => ({ value: c.id, label: c.name }))} />
          <FilterSelect label="Site" name="siteId" value={query.siteId} anyLabel="All sites" options={sites.map((s) => ({ value: s.id, label: `${s.name} (${s.customerName})` }))} />
          <FilterSelect label="Machine" name="machineId" value={query.machineId} anyLabel="All machines" options={machines.map((m) => ({ value: m.id, label: m.serial }))} />
          <label className="flex flex-col text-xs text-ink-faint">
            Per page
            <select name="pageSize" defaultValue={String(query.pageSize)} className={selectClass}>
              {[25, 50, 100, 200].map((n) => <option key={n} value={n}>{n}</option>)}
            </select>
          </label>
          <button className={buttonClass("secondary", "py-1.5")}>Apply</button>
          {filtered ? <Link to="?" className="px-2 py-1.5 text-sm text-accent hover:underline">Clear filters</Link> : null}
        </Form>
        {query.loopId ? (
          <p className="text-sm text-ink-soft">
            Only one loop{findings.items[0] ? <> (<span className="font-mono">{findings.items[0].machineSerial} {findings.items[0].loopKey}</span>)</> : null}.{" "}
            <Link to={withoutLoop()} className="link-in-text">Show every loop</Link>
          </p>
        ) : null}

        <div className="flex items-baseline justify-between text-xs text-ink-faint">
          <span className="tabular" aria-live="polite">
            {busy ? "Loading…" : `${findings.total} ${findings.total === 1 ? "finding" : "findings"}${filtered ? " match" : ""}`}
          </span>
          {pages > 1 ? <span className="tabular">Page {findings.page} of {pages}</span> : null}
        </div>

        {findings.items.length === 0 ? (
          <div className="rounded-xl border border-dashed border-rule bg-white px-5 py-8 text-sm text-ink-soft">
            {filtered ? (
              <>No finding matches these filters. <Link to="?" className="link-in-text">Clear the filters</Link> to see them all.</>
            ) : (
              <>No findings yet. Flyball opens one when a loop's digests show drift, windup, saturation, oscillation or silence, and closes it once the loop is clear again.</>
            )}
          </div>
        ) : (
          <FindingsTable key={params.toString()} slug={slug} rows={findings.items} sort={query.sort} dir={query.dir} canTriage={canTriage} />
        )}

        {pages > 1 ? (
          <nav aria-label="Pages" className="flex items-center justify-end gap-2 text-sm">
            {findings.page > 1 ? <Link to={pageLink(findings.page - 1)} className={buttonClass("secondary", "py-1")}>← Previous</Link> : null}
            {findings.page < pages ? <Link to={pageLink(findings.page + 1)} className={buttonClass("secondary", "py-1")}>Next →</Link> : null}
          </nav>
        ) : null}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Findings · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
