// A printable health report (a loop or a site): no navigation, one row per loop, print CSS
// through Tailwind's `print:` variant (the buttons and links vanish on paper).
import { Link } from "react-router";
import type { HealthReport as Report } from "~/.server/health/report";
import { formatDateTime, formatSig } from "~/components/fleet/format";
import { HealthBadge } from "~/components/fleet/health-badge";
import { SeverityBadge } from "~/components/health/overview-panels";
import { KIND_LABELS } from "~/components/health/words";
import { LogoMark } from "~/components/ui/logo";

const pct = (v: number | null) => (v === null ? "–" : `${Math.round(v * 100)}`);
const DRIFT: Record<string, string> = { learning: "learning its baseline", in_control: "in control", drifting: "drifting" };

export function HealthReport({ report, organisation, csvHref, backHref, backLabel }: { report: Report; organisation: string; csvHref: string; backHref: string; backLabel: string }) {
  const counts = { act: 0, watch: 0, silent: 0, steady: 0 };
  for (const l of report.loops) counts[l.health.band] += 1;
  const machines = new Set(report.loops.map((l) => l.machineId)).size;
  return (
    <main className="mx-auto max-w-6xl px-5 py-6 print:max-w-none print:px-0 print:py-0">
      <div className="mb-4 flex flex-wrap items-center justify-between gap-2 print:hidden">
        <Link to={backHref} className="text-sm text-accent hover:underline">← {backLabel}</Link>
        <div className="flex gap-2">
          <a href={csvHref} download className="rounded-md border border-rule bg-white px-3 py-1.5 text-sm font-medium hover:bg-paper-deep">Download CSV</a>
          <button type="button" onClick={() => window.print()} className="rounded-md bg-accent px-3 py-1.5 text-sm font-medium text-white hover:bg-accent-strong">Print</button>
        </div>
      </div>
      <div className="rounded-xl border border-rule bg-white p-5 print:rounded-none print:border-0 print:p-0">
        <header className="flex items-start justify-between gap-4 border-b border-rule-strong pb-3">
          <div>
            <p className="flex items-center gap-1.5 text-xs text-ink-faint"><LogoMark className="h-4 w-4 text-accent" /> Flyball · {organisation}</p>
            <h1 className="mt-1 text-xl font-semibold">{report.title}</h1>
            <p className="text-sm text-ink-soft">{report.customerName} · {report.siteName}</p>
          </div>
          <p className="text-right text-xs text-ink-faint">Generated<br /><span className="tabular">{formatDateTime(report.generatedAt)}</span></p>
        </header>
        <p className="mt-3 text-sm">
          {report.kind === "site" ? <><span className="tabular">{machines}</span> {machines === 1 ? "machine" : "machines"} in service, </> : null}
          <span className="tabular">{report.loops.length}</span> {report.loops.length === 1 ? "loop" : "loops"}: <span className="tabular">{counts.act}</span> act, <span className="tabular">{counts.watch}</span> watch, <span className="tabular">{counts.silent}</span> silent, <span className="tabular">{counts.steady}</span> steady. Shares are of the time, in percent.
        </p>
        {report.loops.length === 0 ? (
          <p className="mt-4 text-sm text-ink-soft">No machine in service at this site, so there is nothing to report yet.</p>
        ) : (
          <div role="region" tabIndex={0} aria-label="Loops in this report" className="mt-3 overflow-x-auto print:overflow-visible">
            <table className="w-full min-w-[56rem] text-xs print:min-w-0">
              <thead className="border-b border-rule-strong text-left text-ink-faint">
                <tr>
                  <th scope="col" className="py-1 pr-2 font-medium">Machine · loop</th>
                  <th scope="col" className="py-1 pr-2 font-medium">Health</th>
                  <th scope="col" className="py-1 pr-2 text-right font-medium">At output limit 24 h / 7 d</th>
                  <th scope="col" className="py-1 pr-2 text-right font-medium">Saturation trend</th>
                  <th scope="col" className="py-1 pr-2 text-right font-medium">Integrator held 24 h</th>
                  <th scope="col" className="py-1 pr-2 text-right font-medium">Oscillation</th>
                  <th scope="col" className="py-1 pr-2 font-medium">Drift</th>
                  <th scope="col" className="py-1 text-right font-medium">Last digest</th>
                </tr>
              </thead>
              <tbody className="divide-y divide-rule">
                {report.loops.map((l) => {
                  const h = l.health;
                  return (
                    <tr key={l.loopId} className="break-inside-avoid align-top">
                      <td className="py-1.5 pr-2">
                        <span className="font-medium">{l.machineSerial}</span> <span className="font-mono text-ink-faint">{l.loopKey}</span>
                        <span className="block text-ink-soft">{l.loopName}</span>
                        {h.reasons.length && h.band !== "steady" ? <span className="block text-ink-soft">{h.reasons.join(" ")}</span> : null}
                        {l.openFindings.length ? (
                          <ul className="mt-0.5 space-y-0.5">
                            {l.openFindings.map((f) => (
                              <li key={f.id} className="flex flex-wrap items-center gap-1.5"><SeverityBadge severity={f.severity} /> <span>{KIND_LABELS[f.kind]}: {f.summary}</span></li>
                            ))}
                          </ul>
                        ) : null}
                      </td>
                      <td className="py-1.5 pr-2"><HealthBadge band={h.band} score={h.band === "silent" ? null : h.score} /></td>
                      <td className="py-1.5 pr-2 text-right tabular">{pct(h.saturation.share24h)} / {pct(h.saturation.share7d)}<span className="ml-0.5 text-ink-faint">%</span></td>
                      <td className="py-1.5 pr-2 text-right tabular">
                        {h.saturation.slopePerDay === null ? "–" : `${h.saturation.slopePerDay > 0 ? "+" : ""}${formatSig(h.saturation.slopePerDay * 100, 2)}`}<span className="ml-0.5 text-ink-faint">points/day</span>
                        {h.saturation.projectedActAt ? <span className="block text-watch">act limit ≈ {formatDateTime(h.saturation.projectedActAt)}</span> : null}
                      </td>
                      <td className="py-1.5 pr-2 text-right tabular">{pct(h.windup.share24h)}<span className="ml-0.5 text-ink-faint">%</span></td>
                      <td className="py-1.5 pr-2 text-right tabular">
                        {h.oscillation.detectionsPerHour === null ? "–" : formatSig(h.oscillation.detectionsPerHour, 3)}
                        {h.oscillation.limitPerHour !== null ? <span className="text-ink-faint"> of {formatSig(h.oscillation.limitPerHour, 3)} per h</span> : null}
                      </td>
                      <td className="py-1.5 pr-2">{DRIFT[h.drift.state] ?? h.drift.state}</td>
                      <td className="py-1.5 text-right tabular text-ink-soft">{formatDateTime(h.lastDigestAt)}</td>
                    </tr>
                  );
                })}
              </tbody>
            </table>
          </div>
        )}
      </div>
    </main>
  );
}
