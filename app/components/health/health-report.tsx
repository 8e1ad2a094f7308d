// A printable health report: no navigation, a plain table per loop, print CSS through
// Tailwind's `print:` variant (the buttons and links vanish on paper).
import { Link } from "react-router";
import { formatDateTime, formatSig } from "~/components/fleet/format";
import { HealthBadge } from "~/components/fleet/health-badge";
import { LogoMark } from "~/components/ui/logo";
import type { HealthReportRow } from "~/lib/health/report-csv";

const pct = (v: number | null) => (v === null ? "–" : `${Math.round(v * 100)}`);
const DRIFT: Record<string, string> = { learning: "learning", in_control: "in control", drifting: "drifting" };

export function HealthReport({
  title,
  subtitle,
  organisation,
  generatedAt,
  rows,
  csvHref,
  backHref,
  backLabel,
}: {
  title: string;
  subtitle: string;
  organisation: string;
  generatedAt: string;
  rows: HealthReportRow[];
  csvHref: string;
  backHref: string;
  backLabel: string;
}) {
  const counts = { act: 0, watch: 0, silent: 0, steady: 0 };
  for (const r of rows) counts[r.band] += 1;
  return (
    <main className="mx-auto max-w-6xl bg-white px-5 py-6 print:max-w-none print:px-0 print:py-0">
      <div className="mb-4 flex flex-wrap items-center justify-between gap-2 print:hidden">
        <Link to={backHref} className="text-sm text-accent hover:underline">← {backLabel}</Link>
        <div className="flex gap-2">
          <a href={csvHref} className="rounded-md border border-rule bg-white px-3 py-1.5 text-sm font-medium hover:bg-paper-deep" download>Download CSV</a>
          <button type="button" onClick={() => window.print()} className="rounded-md bg-accent px-3 py-1.5 text-sm font-medium text-white hover:bg-accent-strong">Print</button>
        </div>
      </div>
      <header className="flex items-start justify-between gap-4 border-b border-rule-strong pb-3">
        <div>
          <p className="flex items-center gap-1.5 text-xs text-ink-faint"><LogoMark className="h-4 w-4 text-accent" /> Flyball · {organisation}</p>
          <h1 className="mt-1 text-xl font-semibold">{title}</h1>
          <p className="text-sm text-ink-soft">{subtitle}</p>
        </div>
        <p className="text-right text-xs text-ink-faint">Generated<br /><span className="tabular">{formatDateTime(generatedAt)}</span></p>
      </header>
      <p className="mt-3 text-sm">
        <span className="tabular">{rows.length}</span> {rows.length === 1 ? "loop" : "loops"}: <span className="tabular">{counts.act}</span> act, <span className="tabular">{counts.watch}</span> watch, <span className="tabular">{counts.silent}</span> silent, <span className="tabular">{counts.steady}</span> steady. Shares are of the time in the window, in percent.
      </p>
      {rows.length === 0 ? (
        <p className="mt-4 text-sm text-ink-soft">No loops in this report.</p>
      ) : (
        <div role="region" tabIndex={0} aria-label="Report" className="mt-3 overflow-x-auto print:overflow-visible">
          <table className="w-full min-w-[56rem] text-xs print:min-w-0">
            <thead className="border-b border-rule-strong text-left text-ink-faint">
              <tr>
                <th scope="col" className="py-1 pr-2 font-medium">Machine · loop</th>
                <th scope="col" className="py-1 pr-2 font-medium">Health</th>
                <th scope="col" className="py-1 pr-2 text-right font-medium">At limit 24 h / 7 d</th>
                <th scope="col" className="py-1 pr-2 text-right font-medium">Trend</th>
                <th scope="col" className="py-1 pr-2 text-right font-medium">Integrator held</th>
                <th scope="col" className="py-1 pr-2 text-right font-medium">Oscillation</th>
                <th scope="col" className="py-1 pr-2 font-medium">Drift</th>
                <th scope="col" className="py-1 pr-2 font-medium">Open findings</th>
                <th scope="col" className="py-1 text-right font-medium">Last digest</th>
              </tr>
            </thead>
            <tbody className="divide-y divide-rule">
              {rows.map((r) => (
                <tr key={`${r.machineSerial}-${r.loopKey}`} className="break-inside-avoid">
                  <td className="py-1 pr-2">
                    <span className="font-medium">{r.machineSerial}</span> <span className="font-mono text-ink-faint">{r.loopKey}</span>
                    <span className="block text-ink-faint">{r.loopName} · {r.site}</span>
                  </td>
                  <td className="py-1 pr-2"><HealthBadge band={r.band} score={r.score} /></td>
                  <td className="py-1 pr-2 text-right tabular">{pct(r.saturationShare24h)} / {pct(r.saturationShare7d)}<span className="ml-0.5 text-ink-faint">%</span></td>
                  <td className="py-1 pr-2 text-right tabular">
                    {r.saturationSlopePerDay === null ? "–" : `${r.saturationSlopePerDay > 0 ? "+" : ""}${formatSig(r.saturationSlopePerDay * 100, 2)}`}<span className="ml-0.5 text-ink-faint">pts/day</span>
                    {r.projectedActAt ? <span className="block text-watch">act ≈ {formatDateTime(r.projectedActAt)}</span> : null}
                  </td>
                  <td className="py-1 pr-2 text-right tabular">{pct(r.windupShare24h)}<span className="ml-0.5 text-ink-faint">%</span></td>
                  <td className="py-1 pr-2 text-right tabular">{r.oscillationPerHour === null ? "–" : formatSig(r.oscillationPerHour, 3)}{r.oscillationLimitPerHour !== null ? <span className="text-ink-faint"> / {formatSig(r.oscillationLimitPerHour, 3)} per h</span> : null}</td>
                  <td className="py-1 pr-2">{DRIFT[r.driftState] ?? r.driftState}</td>
                  <td className="py-1 pr-2">{r.openFindings.length ? r.openFindings.join(", ") : <span className="text-ink-faint">none</span>}</td>
                  <td className="py-1 text-right tabular text-ink-soft">{formatDateTime(r.lastDigestAt)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </main>
  );
}
