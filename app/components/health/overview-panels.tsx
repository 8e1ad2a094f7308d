// The fleet overview's panels, drawn from one `Overview` answer of the management API.
import { Link } from "react-router";
import { HealthBadge, HEALTH_LABELS } from "~/components/fleet/health-badge";
import { HealthTrendChart } from "~/components/health/health-trend-chart";
import { KIND_LABELS, SEVERITY_LABELS } from "~/components/health/words";
import type { HealthBand } from "~/lib/health";
import { FINDING_KINDS, FINDING_SEVERITIES, type Overview } from "~/lib/health/api-types";

const BANDS: HealthBand[] = ["act", "watch", "silent", "steady"];

const SEVERITY_ICON = { critical: "■", warning: "▲", info: "i" } as const;
const SEVERITY_CLASS = { critical: "text-act", warning: "text-watch", info: "text-ink-soft" } as const;

export function SeverityBadge({ severity }: { severity: keyof typeof SEVERITY_ICON }) {
  return (
    <span className={`inline-flex items-center gap-1 whitespace-nowrap text-xs font-medium ${SEVERITY_CLASS[severity]}`}>
      <span aria-hidden="true" className="text-[0.65rem]">{SEVERITY_ICON[severity]}</span>
      {SEVERITY_LABELS[severity]}
    </span>
  );
}

export function OverviewPanels({ overview, base, search }: { overview: Overview; base: string; search: string }) {
  const { machines, loops, openFindings, attention, trend } = overview;
  const needing = attention.filter((a) => a.band !== "silent");
  const silent = attention.filter((a) => a.band === "silent");
  const openTotal = Object.values(openFindings.bySeverity).reduce((a, b) => a + (b ?? 0), 0);
  const findingsLink = (extra: Record<string, string>) => {
    const params = new URLSearchParams(search);
    params.delete("modelId");
    params.set("state", "open");
    for (const [k, v] of Object.entries(extra)) params.set(k, v);
    return `${base}/findings?${params}`;
  };
  return (
    <div className="space-y-6">
      <section aria-labelledby="attention-heading">
        <h2 id="attention-heading" className="font-semibold">Machines needing attention</h2>
        <p className="text-xs text-ink-faint">Worst first: the loop with the lowest score decides, and the reason says what is wrong in words.</p>
        {needing.length === 0 ? (
          <p className="mt-2 rounded-xl border border-dashed border-rule bg-white px-5 py-6 text-sm text-ink-soft">
            No machine has a loop in the act or watch band right now. Nothing to do here.
          </p>
        ) : (
          <ul className="mt-2 divide-y divide-rule overflow-hidden rounded-xl border border-rule bg-white">
            {needing.map((m) => (
              <li key={m.machineId}>
                <Link to={`${base}/machines/${m.machineId}`} className="flex flex-wrap items-center gap-x-4 gap-y-1 px-4 py-2.5 text-sm hover:bg-paper">
                  <HealthBadge band={m.band} score={m.band === "silent" ? null : m.score} />
                  <span className="font-medium">{m.serial}</span>
                  <span className="min-w-0 flex-1 basis-60 text-ink-soft">{m.reason}</span>
                  <span aria-hidden="true" className="text-accent">→</span>
                </Link>
              </li>
            ))}
          </ul>
        )}
      </section>

      <section aria-labelledby="bands-heading">
        <h2 id="bands-heading" className="font-semibold">Health at a glance</h2>
        <ul className="mt-2 grid grid-cols-2 gap-3 lg:grid-cols-4">
          {BANDS.map((band) => (
            <li key={band}>
              <Link to={`${base}/machines?health=${band}`} className="block h-full rounded-xl border border-rule bg-white px-4 py-3 hover:border-accent/40">
                <HealthBadge band={band} />
                <p className="mt-2 text-2xl font-semibold tabular">
                  {machines[band]} <span className="text-sm font-normal text-ink-faint">{machines[band] === 1 ? "machine" : "machines"}</span>
                </p>
                <p className="text-xs text-ink-faint">
                  <span className="tabular">{loops[band]}</span> {loops[band] === 1 ? "loop" : "loops"} {HEALTH_LABELS[band].toLowerCase()}
                </p>
              </Link>
            </li>
          ))}
        </ul>
      </section>

      <div className="grid gap-4 lg:grid-cols-2">
        <section aria-labelledby="findings-heading" className="rounded-xl border border-rule bg-white p-4">
          <div className="flex items-baseline justify-between">
            <h2 id="findings-heading" className="font-semibold">Open findings</h2>
            <Link to={findingsLink({})} className="text-sm text-accent hover:underline">All <span className="tabular">{openTotal}</span> open</Link>
          </div>
          {openTotal === 0 ? (
            <p className="mt-2 text-sm text-ink-soft">No open findings. Findings appear when a loop drifts, winds up, saturates, oscillates or goes silent.</p>
          ) : (
            <div className="mt-2 grid items-start gap-4 sm:grid-cols-2">
              <table className="w-full text-sm">
                <caption className="text-left text-xs text-ink-faint">By severity</caption>
                <tbody className="divide-y divide-rule">
                  {FINDING_SEVERITIES.slice().reverse().map((s) => (
                    <tr key={s}>
                      <th scope="row" className="py-1 text-left font-normal"><Link to={findingsLink({ severity: s })} className="hover:underline"><SeverityBadge severity={s} /></Link></th>
                      <td className="py-1 text-right tabular">{openFindings.bySeverity[s] ?? 0}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
              <table className="w-full text-sm">
                <caption className="text-left text-xs text-ink-faint">By kind</caption>
                <tbody className="divide-y divide-rule">
                  {FINDING_KINDS.map((k) => (
                    <tr key={k}>
                      <th scope="row" className="py-1 text-left font-normal"><Link to={findingsLink({ kind: k })} className="text-ink hover:underline">{KIND_LABELS[k]}</Link></th>
                      <td className="py-1 text-right tabular">{openFindings.byKind[k] ?? 0}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </section>

        <section aria-labelledby="silent-heading" className="rounded-xl border border-rule bg-white p-4">
          <h2 id="silent-heading" className="font-semibold">Silent machines <span className="tabular font-normal text-ink-faint">({machines.silent})</span></h2>
          {machines.silent === 0 ? (
            <p className="mt-2 text-sm text-ink-soft">Every machine has sent digests recently.</p>
          ) : (
            <>
              <p className="mt-1 text-xs text-ink-faint">No digests for more than three times their usual interval: check power, network and the controller's clock.</p>
              <ul className="mt-2 divide-y divide-rule text-sm">
                {silent.map((m) => (
                  <li key={m.machineId} className="flex flex-wrap items-center gap-x-3 py-1.5">
                    <HealthBadge band="silent" />
                    <Link to={`${base}/machines/${m.machineId}`} className="font-medium text-accent hover:underline">{m.serial}</Link>
                    <span className="text-ink-soft">{m.reason}</span>
                  </li>
                ))}
              </ul>
              {silent.length < machines.silent ? (
                <Link to={`${base}/machines?health=silent`} className="mt-2 inline-block text-sm text-accent hover:underline">All {machines.silent} silent machines</Link>
              ) : null}
            </>
          )}
        </section>
      </div>

      <section aria-labelledby="trend-heading" className="rounded-xl border border-rule bg-white p-4">
        <h2 id="trend-heading" className="font-semibold">Last 30 days</h2>
        <div className="mt-2">
          <HealthTrendChart trend={trend} />
        </div>
      </section>
    </div>
  );
}
