import { data, Form, Link, useSearchParams } from "react-router";
import { listAuditEvents, listAuditFacets, type AuditItem } from "~/.server/audit/audit-log";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { PageHeader } from "~/components/org-shell";
import { formatGain } from "~/components/bench/format";
import { buttonClass } from "~/components/ui/button";
import { AuditQuerySchema } from "~/lib/gain-sets/schemas";
import type { Route } from "./+types/audit";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "audit:read");
  const search = Object.fromEntries(new URL(request.url).searchParams);
  // Dates from the form are days: `to` covers the whole day.
  if (typeof search.to === "string" && /^\d{4}-\d{2}-\d{2}$/.test(search.to)) search.to = `${search.to}T23:59:59.999Z`;
  const query = AuditQuerySchema.safeParse({ pageSize: 50, ...search });
  if (!query.success) throw data({ message: "Check the filters in the address." }, { status: 400 });
  const scope = { organisationId: membership.organisation.id };
  const [log, facets] = await Promise.all([listAuditEvents(getDb(), scope, query.data), listAuditFacets(getDb(), scope)]);
  return { log, facets, slug: membership.organisation.slug };
}

const show = (v: unknown): string => {
  if (v === undefined || v === null || v === "") return "–";
  if (typeof v === "object" && v !== null && "kp" in v && "ki" in v && "kd" in v) {
    const g = v as { kp: number; ki: number; kd: number };
    return `kp ${formatGain(g.kp)}, ki ${formatGain(g.ki)}, kd ${formatGain(g.kd)}`;
  }
  if (typeof v === "number") return formatGain(v);
  return typeof v === "object" ? JSON.stringify(v) : String(v);
};

/** The order fields are shown in (jsonb keeps its own order). */
const FIRST = ["version", "state", "role", "status", "gains", "serial", "email", "userId"];
const ordered = (keys: string[]) => [...keys].sort((a, b) => (FIRST.indexOf(a) + 1 || 99) - (FIRST.indexOf(b) + 1 || 99) || a.localeCompare(b));

/** The fields that changed between before and after, as "field: old → new". */
function changes(item: AuditItem): string[] {
  const before = item.before ?? {};
  const after = item.after ?? {};
  if (!item.before && item.after) {
    return [`created: ${ordered(Object.keys(after)).filter((k) => after[k] !== null && after[k] !== "").slice(0, 4).map((k) => `${k} ${show(after[k])}`).join("; ")}`];
  }
  if (item.before && !item.after) return [`removed: ${ordered(Object.keys(before)).slice(0, 3).map((k) => `${k} ${show(before[k])}`).join("; ")}`];
  return ordered([...new Set([...Object.keys(before), ...Object.keys(after)])])
    .filter((k) => JSON.stringify(before[k]) !== JSON.stringify(after[k]))
    .map((k) => `${k}: ${show(before[k])} → ${show(after[k])}`);
}

/** What the event was about, in words: "gain set zone_1 v4", "member", "machine CTM-EX-1001". */
function targetText(item: AuditItem): string {
  const d = item.detail as { template?: string; version?: number; serial?: string; email?: string };
  const kind = item.targetType.replace(/_/g, " ");
  if (item.targetType === "gain_set" && d.template) return `${kind} ${d.template} v${d.version ?? ""}`.trim();
  if (d.serial) return `${kind} ${d.serial}`;
  if (d.email) return `${kind} ${d.email}`;
  return kind;
}

const SHOWN_ELSEWHERE = new Set(["template", "version", "serial"]);

function detailText(item: AuditItem): string {
  return Object.entries(item.detail)
    .filter(([k, v]) => v !== null && v !== undefined && v !== "" && !SHOWN_ELSEWHERE.has(k))
    .slice(0, 5)
    .map(([k, v]) => `${k} ${typeof v === "object" ? JSON.stringify(v) : String(v)}`)
    .join(" · ");
}

const INPUT = "mt-1 block rounded-md border border-rule-strong bg-white px-2.5 py-1.5 text-sm font-normal";

export default function AuditPage({ loaderData }: Route.ComponentProps) {
  const { log, facets, slug } = loaderData;
  const [params] = useSearchParams();
  const pages = Math.max(1, Math.ceil(log.total / log.pageSize));
  const filters = new URLSearchParams(params);
  filters.delete("page");
  const csv = new URLSearchParams(filters);
  csv.set("format", "csv");
  if (csv.get("to") && /^\d{4}-\d{2}-\d{2}$/.test(csv.get("to")!)) csv.set("to", `${csv.get("to")}T23:59:59.999Z`);
  const pageLink = (page: number) => {
    const next = new URLSearchParams(filters);
    next.set("page", String(page));
    return `?${next}`;
  };
  return (
    <>
      <PageHeader
        title="Audit log"
        description="Every change to gain sets, approvals, releases, enrolments, members and roles: who, when, and what it was before and after. Entries are never changed or removed."
        action={<a href={`/api/v1/o/${slug}/audit?${csv}`} className={buttonClass("secondary")} download>Download CSV</a>}
      />
      <div className="space-y-4 px-4 py-5 sm:px-8">
        <Form method="get" className="flex flex-wrap items-end gap-3" aria-label="Filter the audit log">
          <label className="text-xs font-medium text-ink">
            From
            <input type="date" name="from" defaultValue={params.get("from")?.slice(0, 10) ?? ""} className={INPUT} />
          </label>
          <label className="text-xs font-medium text-ink">
            To
            <input type="date" name="to" defaultValue={params.get("to")?.slice(0, 10) ?? ""} className={INPUT} />
          </label>
          <label className="text-xs font-medium text-ink">
            Who
            <select name="actorId" defaultValue={params.get("actorId") ?? ""} className={`${INPUT} w-52 max-w-full`}>
              <option value="">Anyone</option>
              {facets.actors.map((a) => (
                <option key={a.id} value={a.id}>{a.name}{a.email ? ` (${a.email})` : ""}</option>
              ))}
            </select>
          </label>
          <label className="text-xs font-medium text-ink">
            What
            <select name="action" defaultValue={params.get("action") ?? ""} className={`${INPUT} w-56 max-w-full`}>
              <option value="">Any action</option>
              {[...new Set(facets.actions.map((a) => a.split(".")[0]!))].map((group) => (
                <optgroup key={group} label={group.replace(/_/g, " ")}>
                  <option value={group}>every {group.replace(/_/g, " ")} action</option>
                  {facets.actions.filter((a) => a.startsWith(`${group}.`)).map((a) => (
                    <option key={a} value={a}>{a}</option>
                  ))}
                </optgroup>
              ))}
            </select>
          </label>
          <button type="submit" className={buttonClass("secondary")}>Filter</button>
          {filters.toString() ? <Link to="?" className="text-sm text-accent hover:underline">Clear filters</Link> : null}
        </Form>

        {log.items.length === 0 ? (
          <div className="rounded-md border border-rule bg-white px-4 py-6 text-sm text-ink-soft">
            <p className="font-medium text-ink">No entries {filters.toString() ? "match these filters" : "yet"}.</p>
            <p className="mt-1">The log fills as people change gain sets, machines, members and roles.</p>
          </div>
        ) : (
          <div role="region" aria-label="Audit entries" tabIndex={0} className="overflow-x-auto rounded-md border border-rule bg-white">
            <table className="w-full text-sm">
              <caption className="sr-only">Audit log entries, newest first ({log.total})</caption>
              <thead className="sticky top-0 bg-paper text-left text-xs text-ink-faint">
                <tr>
                  <th scope="col" className="px-3 py-2 font-medium">When (UTC)</th>
                  <th scope="col" className="px-3 py-2 font-medium">Who</th>
                  <th scope="col" className="px-3 py-2 font-medium">Action</th>
                  <th scope="col" className="px-3 py-2 font-medium">On</th>
                  <th scope="col" className="px-3 py-2 font-medium">Change</th>
                </tr>
              </thead>
              <tbody className="divide-y divide-rule align-top">
                {log.items.map((item) => {
                  const changed = changes(item);
                  const detail = detailText(item);
                  return (
                    <tr key={item.id}>
                      <td className="whitespace-nowrap px-3 py-1.5 tabular text-ink-soft"><time dateTime={item.at}>{item.at.replace("T", " ").slice(0, 19)}</time></td>
                      <td className="px-3 py-1.5 text-ink">{item.actor.name}{item.actor.email ? <div className="text-xs text-ink-faint">{item.actor.email}</div> : null}</td>
                      <td className="px-3 py-1.5 font-mono text-xs text-ink">
                        {/* Break after the dot only: "gain_set." / "approved". */}
                        {item.action.split(".").map((part, i) => (
                          <span key={i}>{i > 0 ? <>.<wbr /></> : null}{part}</span>
                        ))}
                      </td>
                      <td className="px-3 py-1.5 text-ink-soft">
                        {item.targetType === "gain_set" && item.targetId ? <Link to={`/o/${slug}/gain-sets/${item.targetId}`} className="link-in-text">{targetText(item)}</Link> : targetText(item)}
                      </td>
                      <td className="min-w-64 max-w-xl px-3 py-1.5 text-xs text-ink-soft">
                        {changed.length ? <ul>{changed.map((c) => <li key={c} className="break-words">{c}</li>)}</ul> : null}
                        {detail ? <p className="break-words text-ink-faint">{detail}</p> : null}
                      </td>
                    </tr>
                  );
                })}
              </tbody>
            </table>
          </div>
        )}
        <div className="flex flex-wrap items-center justify-between gap-3 text-xs text-ink-soft">
          <p>{log.total} entr{log.total === 1 ? "y" : "ies"}{pages > 1 ? `, page ${log.page} of ${pages}` : ""}</p>
          {pages > 1 ? (
            <nav aria-label="Pages" className="flex gap-3">
              {log.page > 1 ? <Link to={pageLink(log.page - 1)} className="link-in-text">Newer</Link> : null}
              {log.page < pages ? <Link to={pageLink(log.page + 1)} className="link-in-text">Older</Link> : null}
            </nav>
          ) : null}
        </div>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Audit log · Flyball" }];

export { ErrorBoundary } from "~/components/route-error";
