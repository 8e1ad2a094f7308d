import { Form, Link, useSearchParams } from "react-router";
import { data } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listBenchTemplates, listGainSets } from "~/.server/tuning/gain-sets";
import { formatGain, formatNumber } from "~/components/bench/format";
import { ComparePicker } from "~/components/gain-sets/compare-picker";
import { GainSetStateBadge, STATE_WORDS } from "~/components/gain-sets/state-badge";
import { PageHeader } from "~/components/org-shell";
import { buttonClass } from "~/components/ui/button";
import { can } from "~/lib/access/capabilities";
import { GainSetListQuerySchema } from "~/lib/gain-sets/schemas";
import { GAIN_SET_STATES } from "~/lib/gain-sets/types";
import type { Route } from "./+types/gain-sets";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:read");
  const query = GainSetListQuerySchema.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  if (!query.success) throw data({ message: "Check the filters in the address." }, { status: 400 });
  const scope = { organisationId: membership.organisation.id };
  const [list, templates, all] = await Promise.all([
    listGainSets(getDb(), scope, query.data),
    listBenchTemplates(getDb(), scope),
    // For the comparison picker: every version, newest first.
    listGainSets(getDb(), scope, { page: 1, pageSize: 200 }),
  ]);
  return {
    list,
    templates: templates.map((t) => ({ id: t.id, label: `${t.modelName} · ${t.name} (${t.key})` })),
    versions: all.items.map((g) => ({ id: g.id, label: `${g.template.key} v${g.version} (${STATE_WORDS[g.state].toLowerCase()})` })),
    canTune: can(membership.role, "tuning:use"),
    slug: membership.organisation.slug,
  };
}

export default function GainSetsPage({ loaderData }: Route.ComponentProps) {
  const { list, templates, versions, canTune, slug } = loaderData;
  const [params] = useSearchParams();
  const base = `/o/${slug}`;
  const pages = Math.max(1, Math.ceil(list.total / list.pageSize));
  const pageLink = (page: number) => {
    const next = new URLSearchParams(params);
    next.set("page", String(page));
    return `?${next}`;
  };
  return (
    <>
      <PageHeader
        title="Gain sets"
        description="Versioned gains per loop template. A draft is proposed, passes the checks, and is approved by a second engineer before any release can send it to machines."
        action={canTune ? <Link to={`${base}/bench`} className={buttonClass("primary")}>Derive gains on the bench</Link> : null}
      />
      <div className="space-y-5 px-4 py-5 sm:px-8">
        <Form method="get" className="flex flex-wrap items-end gap-3" aria-label="Filter gain sets">
          <label className="text-xs font-medium text-ink">
            Loop template
            <select name="loopTemplateId" defaultValue={params.get("loopTemplateId") ?? ""} className="mt-1 block w-64 max-w-full rounded-md border border-rule-strong bg-white px-2.5 py-1.5 text-sm font-normal">
              <option value="">All templates</option>
              {templates.map((t) => (
                <option key={t.id} value={t.id}>{t.label}</option>
              ))}
            </select>
          </label>
          <label className="text-xs font-medium text-ink">
            State
            <select name="state" defaultValue={params.get("state") ?? ""} className="mt-1 block w-40 rounded-md border border-rule-strong bg-white px-2.5 py-1.5 text-sm font-normal">
              <option value="">Any state</option>
              {GAIN_SET_STATES.map((s) => (
                <option key={s} value={s}>{STATE_WORDS[s]}</option>
              ))}
            </select>
          </label>
          <button type="submit" className={buttonClass("secondary")}>Filter</button>
        </Form>

        {list.items.length === 0 ? (
          <div className="rounded-md border border-rule bg-white px-4 py-6 text-sm text-ink-soft">
            <p className="font-medium text-ink">No gain sets {params.toString() ? "match these filters" : "yet"}.</p>
            <p className="mt-1">
              Gain sets hold the gains a loop template's machines will run. {canTune ? <>Derive some on the <Link to={`${base}/bench`} className="link-in-text">tuning bench</Link> and save them as a draft.</> : "Engineers save them from the tuning bench."}
            </p>
          </div>
        ) : (
          <div role="region" aria-label="Gain sets" tabIndex={0} className="overflow-x-auto rounded-md border border-rule bg-white">
            <table className="w-full text-sm tabular">
              <caption className="sr-only">Gain sets by loop template, state and version ({list.total})</caption>
              <thead className="sticky top-0 bg-paper text-left text-xs text-ink-faint">
                <tr>
                  <th scope="col" className="px-3 py-2 font-medium">Loop template</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">Version</th>
                  <th scope="col" className="px-3 py-2 font-medium">State</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">kp</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">ki <span className="font-normal">1/s</span></th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">kd <span className="font-normal">s</span></th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">Gain margin</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">Phase margin</th>
                  <th scope="col" className="px-3 py-2 font-medium">Drafted by</th>
                  <th scope="col" className="px-3 py-2 font-medium">Note</th>
                </tr>
              </thead>
              <tbody className="divide-y divide-rule">
                {list.items.map((g) => (
                  <tr key={g.id} className="hover:bg-paper">
                    <td className="px-3 py-1.5">
                      <Link to={`${base}/gain-sets/${g.id}`} className="font-medium text-accent hover:underline">
                        {g.template.name} <span className="text-ink-faint">({g.template.key})</span>
                      </Link>
                      <div className="text-xs text-ink-faint">{g.template.modelName}</div>
                    </td>
                    <td className="px-3 py-1.5 text-right">v{g.version}</td>
                    <td className="px-3 py-1.5"><GainSetStateBadge state={g.state} /></td>
                    <td className="px-3 py-1.5 text-right">{formatGain(g.gains.kp)}</td>
                    <td className="px-3 py-1.5 text-right">{formatGain(g.gains.ki)}</td>
                    <td className="px-3 py-1.5 text-right">{formatGain(g.gains.kd)}</td>
                    <td className="px-3 py-1.5 text-right">{g.margins ? (g.margins.gainMargin === null ? "∞" : formatNumber(g.margins.gainMargin, 3)) : "–"}</td>
                    <td className="px-3 py-1.5 text-right">{g.margins?.phaseMargin != null ? <>{formatNumber(g.margins.phaseMargin, 3)}<span className="text-ink-faint"> °</span></> : "–"}</td>
                    <td className="px-3 py-1.5 text-ink-soft">{g.createdBy ?? "–"}</td>
                    <td className="max-w-56 truncate px-3 py-1.5 text-ink-soft" title={g.note}>{g.note || "–"}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
        <div className="flex flex-wrap items-center justify-between gap-3 text-xs text-ink-soft">
          <p>{list.total} gain set{list.total === 1 ? "" : "s"}{pages > 1 ? `, page ${list.page} of ${pages}` : ""}</p>
          {pages > 1 ? (
            <nav aria-label="Pages" className="flex gap-2">
              {list.page > 1 ? <Link to={pageLink(list.page - 1)} className="link-in-text">Previous page</Link> : null}
              {list.page < pages ? <Link to={pageLink(list.page + 1)} className="link-in-text">Next page</Link> : null}
            </nav>
          ) : null}
        </div>

        {versions.length >= 2 ? (
          <section aria-labelledby="compare-title" className="rounded-md border border-rule bg-white px-4 py-4">
            <h2 id="compare-title" className="text-sm font-semibold text-ink">Compare two versions</h2>
            <p className="mt-0.5 text-xs text-ink-faint">Gains side by side, step and load responses on the template's reference model, and margins.</p>
            <ComparePicker action={`${base}/gain-sets/compare`} versions={versions} />
          </section>
        ) : null}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Gain sets · Flyball" }];

export { ErrorBoundary } from "~/components/route-error";
