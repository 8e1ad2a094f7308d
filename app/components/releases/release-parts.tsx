// Pieces of the release pages: the state badge (icon + word), per-wave progress bars, and the
// guard figures. Colours from the app's tokens only, always with words.
import { type StateLook, StatePill } from "~/components/ui/state-pill";
import type { ReleaseFigures, ReleaseState, TargetState } from "~/lib/release/types";

const STATE_LOOK: Record<ReleaseState, StateLook> = {
  pending: { word: "Pending", icon: "○", className: "border-rule-strong text-ink-soft" },
  piloting: { word: "Piloting", icon: "◔", className: "border-accent/40 text-accent" },
  held: { word: "Held", icon: "‖", className: "border-act/40 bg-act/5 text-act" },
  widening: { word: "Widening", icon: "◑", className: "border-accent/40 text-accent" },
  complete: { word: "Complete", icon: "✓", className: "border-steady/40 bg-steady/5 text-steady" },
  rolled_back: { word: "Rolled back", icon: "↶", className: "border-watch/40 bg-watch/10 text-watch" },
};

export function ReleaseStateBadge({ state }: { state: ReleaseState }) {
  return <StatePill look={STATE_LOOK[state]} />;
}

const TARGET_WORDS: Record<TargetState, string> = { pending: "waiting", offered: "offered", applied: "applied", rejected: "rejected" };
const SEGMENTS: { state: TargetState; className: string }[] = [
  { state: "applied", className: "bg-steady" },
  { state: "rejected", className: "bg-act" },
  { state: "offered", className: "bg-accent/50" },
  { state: "pending", className: "bg-rule" },
];

export function TargetStateWord({ state }: { state: TargetState }) {
  const icon = { pending: "○", offered: "→", applied: "✓", rejected: "✕" }[state];
  const tone = { pending: "text-ink-faint", offered: "text-accent", applied: "text-steady", rejected: "text-act" }[state];
  return (
    <span className={`inline-flex items-center gap-1 ${tone}`}>
      <span aria-hidden="true">{icon}</span>
      {TARGET_WORDS[state]}
    </span>
  );
}

/** One wave: a stacked bar of its loops by state, with the counts in words beside it. */
export function WaveProgress({ index, state, counts }: { index: number; state: string; counts: Record<TargetState, number> }) {
  const total = Object.values(counts).reduce((s, n) => s + n, 0);
  const label = index === 0 ? "Pilot (wave 1)" : `Wave ${index + 1}`;
  const done = counts.applied + counts.rejected;
  return (
    <div className="space-y-1">
      <div className="flex items-baseline justify-between gap-3 text-sm">
        <span className="font-medium text-ink">
          {label} <span className="text-xs font-normal text-ink-faint">· {state === "pending" ? "not offered yet" : state === "stopped" ? "stopped" : state}</span>
        </span>
        <span className="tabular-nums text-ink-soft">
          {done} of {total} answered
        </span>
      </div>
      <div role="progressbar" aria-label={`${label}: ${counts.applied} applied, ${counts.rejected} rejected, ${counts.offered} offered, ${counts.pending} waiting`} aria-valuemin={0} aria-valuemax={total} aria-valuenow={done} className="flex h-3 overflow-hidden rounded-full bg-paper-deep">
        {SEGMENTS.map((s) => (counts[s.state] > 0 && total > 0 ? <div key={s.state} className={s.className} style={{ width: `${(counts[s.state] / total) * 100}%` }} /> : null))}
      </div>
      <p className="flex flex-wrap gap-x-3 text-xs tabular-nums text-ink-soft">
        {SEGMENTS.map((s) => (
          <span key={s.state} className="inline-flex items-center gap-1">
            <span aria-hidden="true" className={`inline-block h-2 w-2 rounded-full ${s.className}`} />
            {counts[s.state]} {TARGET_WORDS[s.state]}
          </span>
        ))}
      </p>
    </div>
  );
}

const pct = (x: number | null | undefined) => (x == null ? "—" : `${Math.round(x * 100)} %`);
const num = (x: number | null | undefined, d = 3) => (x == null ? "—" : x.toPrecision(d));

/** The last guard evaluation as a small table of figures. */
export function GuardFigures({ figures }: { figures: ReleaseFigures | null }) {
  if (!figures) return <p className="text-sm text-ink-soft">Not evaluated yet: the guard runs each minute once the pilot has been offered.</p>;
  const rows: [string, string][] = [
    ["Pilot loops with figures", String(figures.pilotRatios)],
    ["Control loops with figures", String(figures.controlRatios)],
    ["Pilot median IAE ratio (after / before)", num(figures.pilotMedian)],
    ["Control median IAE ratio", figures.controlMedian == null ? "— (taken as 1)" : num(figures.controlMedian)],
    ["Increase over control", `${pct(figures.increase)} (allowed ${pct(figures.maxIaeIncrease)})`],
    ["Mann–Whitney test", figures.test.applied ? `U = ${figures.test.u}, p = ${figures.test.p.toPrecision(2)} (${figures.test.method})` : `not used: ${figures.test.reason}`],
    ["Pilot devices rejecting", `${pct(figures.rejectShare)} (allowed ${pct(figures.maxRejectShare)})`],
    ["Pilot loops with a critical finding", String(figures.criticalLoops)],
  ];
  return (
    <div>
      <table className="w-full text-sm">
        <tbody>
          {rows.map(([k, v]) => (
            <tr key={k} className="border-b border-rule last:border-0">
              <th scope="row" className="py-1.5 pr-3 text-left font-normal text-ink-soft">{k}</th>
              <td className="py-1.5 text-right tabular-nums text-ink">{v}</td>
            </tr>
          ))}
        </tbody>
      </table>
      <p className="mt-2 text-xs text-ink-faint">
        Evaluated {new Date(figures.evaluatedAt).toISOString().replace("T", " ").slice(0, 19)} UTC: {figures.hold ? "hold" : "no reason to hold"}.
      </p>
    </div>
  );
}
