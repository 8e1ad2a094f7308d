// One loop's health in figures (the `LoopHealth` answer): saturation with its trend and the
// projected date it reaches the act limit, windup, oscillation against its limit, drift.
import { formatAgo, formatDateTime, formatSig } from "~/components/fleet/format";
import { HealthBadge } from "~/components/fleet/health-badge";
import type { LoopHealth } from "~/lib/health/api-types";

const pct = (v: number | null) => (v === null ? "–" : `${Math.round(v * 100)}`);
const DRIFT_WORDS = {
  learning: "Learning the baseline",
  in_control: "In control",
  drifting: "Drifting",
} as const;

function Figure({ label, value, unit, note, tone }: { label: string; value: string; unit?: string; note?: string; tone?: "act" | "watch" }) {
  return (
    <div className="min-w-0">
      <dt className="text-xs text-ink-faint">{label}</dt>
      <dd className={`text-lg font-semibold tabular ${tone === "act" ? "text-act" : tone === "watch" ? "text-watch" : ""}`}>
        {value}
        {unit ? <span className="ml-0.5 text-xs font-normal text-ink-faint">{unit}</span> : null}
      </dd>
      {note ? <dd className="text-xs text-ink-soft">{note}</dd> : null}
    </div>
  );
}

export function LoopHealthPanel({ health, loopName, reportHref }: { health: LoopHealth; loopName: string; reportHref?: string }) {
  const { saturation, windup, oscillation, drift } = health;
  const slope = saturation.slopePerDay;
  const slopeNote =
    slope === null ? "not enough history for a trend" : slope > 0 ? `rising ${formatSig(slope * 100, 2)} points a day` : slope < 0 ? `falling ${formatSig(-slope * 100, 2)} points a day` : "flat";
  const oscOver = oscillation.detectionsPerHour !== null && oscillation.limitPerHour !== null && oscillation.detectionsPerHour > oscillation.limitPerHour;
  const driftValue = drift.cusumHigh === null && drift.cusumLow === null ? null : Math.max(drift.cusumHigh ?? 0, drift.cusumLow ?? 0);
  return (
    <section aria-labelledby="loop-health-heading" className="rounded-xl border border-rule bg-white p-4">
      <div className="flex flex-wrap items-center justify-between gap-2">
        <h2 id="loop-health-heading" className="font-semibold">Health of {loopName}</h2>
        <span className="flex items-center gap-2 text-xs text-ink-faint">
          {reportHref ? <a href={reportHref} className="text-accent hover:underline">Health report</a> : null}
          <span>last digest {formatAgo(health.lastDigestAt)}</span>
          <HealthBadge band={health.band} score={health.band === "silent" ? null : health.score} />
        </span>
      </div>
      {health.reasons.length ? (
        <ul className="mt-2 list-inside list-disc text-sm text-ink-soft">
          {health.reasons.map((r) => <li key={r}>{r}</li>)}
        </ul>
      ) : (
        <p className="mt-2 text-sm text-ink-soft">Nothing in this loop's last digests crosses a limit.</p>
      )}
      <dl className="mt-3 grid grid-cols-2 gap-x-6 gap-y-4 sm:grid-cols-3 lg:grid-cols-5">
        <Figure label="At output limit, 24 h" value={pct(saturation.share24h)} unit="%" note={`7 days: ${pct(saturation.share7d)} %`} />
        <Figure
          label="Saturation trend"
          value={slope === null ? "–" : `${slope > 0 ? "+" : ""}${formatSig(slope * 100, 2)}`}
          unit="points/day"
          note={saturation.projectedActAt ? `reaches the act limit about ${formatDateTime(saturation.projectedActAt)}` : slopeNote}
          tone={saturation.projectedActAt ? "watch" : undefined}
        />
        <Figure label="Integrator held, 24 h" value={pct(windup.share24h)} unit="%" note={`while saturated: ${pct(windup.pinnedShare24h)} %`} />
        <Figure
          label="Oscillation"
          value={oscillation.detectionsPerHour === null ? "–" : formatSig(oscillation.detectionsPerHour, 3)}
          unit="per hour"
          note={oscillation.limitPerHour === null ? "no limit set" : `limit ${formatSig(oscillation.limitPerHour, 3)} per hour`}
          tone={oscOver ? "act" : undefined}
        />
        <Figure
          label="Drift"
          value={DRIFT_WORDS[drift.state]}
          note={
            drift.state === "learning"
              ? `judged once the baseline is complete${drift.sinceGainVersion !== null ? ` (since gain version ${drift.sinceGainVersion})` : ""}`
              : `sum ${driftValue === null ? "–" : formatSig(driftValue, 3)} of limit ${formatSig(drift.limit, 3)} (baseline std devs)`
          }
          tone={drift.state === "drifting" ? "act" : undefined}
        />
      </dl>
    </section>
  );
}
