import type { LoopResponse, LoopScore } from "~/lib/compute/bench";
import { formatNumber, formatShare, formatTime } from "./format";
import { RiskBadge } from "./risk-badge";
import type { Units } from "./settings-panel";
import { CHART_COLORS, TimeChart, type ChartLimit } from "./time-chart";
import { Value } from "./value";

export function ScoreList({ score, units }: { score: LoopScore; units: Units }) {
  const items: { label: string; value: string; unit?: string }[] = [
    { label: "Gain margin", value: formatNumber(score.gainMargin, 3) },
    { label: "Phase margin", value: formatNumber(score.phaseMargin, 3), unit: "°" },
    { label: "Ms", value: formatNumber(score.peakSensitivity, 3) },
    { label: "Overshoot", value: formatNumber(score.overshootPercent === null ? null : Math.max(0, score.overshootPercent), 3), unit: "%" },
    { label: "Settling", value: formatTime(score.settlingTime), unit: "s" },
    { label: "IAE", value: formatNumber(score.iae, 3), unit: `${units.value}·s` },
    { label: "Saturated", value: formatShare(score.saturatedFraction), unit: "%" },
    { label: "Delay margin", value: formatTime(score.delayMargin), unit: "s" },
  ];
  return (
    <div>
      <RiskBadge risk={score.risk} detail />
      <dl className="mt-2 grid grid-cols-2 gap-x-4 gap-y-1.5 text-sm sm:grid-cols-4 lg:grid-cols-1">
        {items.map((item) => (
          <div key={item.label} className="flex items-baseline justify-between gap-2 border-b border-rule/60 pb-1">
            <dt className="text-xs text-ink-soft">{item.label}</dt>
            <dd className="text-right">
              <Value unit={item.unit}>{item.value}</Value>
            </dd>
          </div>
        ))}
      </dl>
      {score.divergedAt !== null ? (
        <p className="mt-1.5 text-xs text-act" data-testid="diverged-note">
          Diverged: the simulated response ran away at {formatTime(score.divergedAt)} s, so the figures stop there.
        </p>
      ) : !score.stable ? (
        <p className="mt-1.5 text-xs text-act">Unstable: the closed loop has poles outside the stable region, so Ms is not given.</p>
      ) : null}
      {score.settlingTime === null && score.risk.level !== "unstable" ? (
        <p className="mt-1.5 text-xs text-ink-faint">Settling “–”: not within 2 % before the load step.</p>
      ) : null}
    </div>
  );
}

/** Set point and load step: y with r above, u with its limits below. */
export function ResponseCharts({ response, units, limits }: { response: LoopResponse; units: Units; limits: { min: number; max: number } | null }) {
  const limitLines: ChartLimit[] = limits
    ? [
        { key: "high", label: "High limit", value: limits.max, color: CHART_COLORS.limit },
        { key: "low", label: "Low limit", value: limits.min, color: CHART_COLORS.limit },
      ]
    : [];
  return (
    <div className="space-y-4" data-testid="response-charts">
      <TimeChart
        title="Process value"
        yLabel="Process value"
        yUnit={units.value}
        series={[
          { key: "r", label: "Set point", t: response.t, v: response.r, color: CHART_COLORS.setpoint },
          { key: "y", label: "Process value", t: response.t, v: response.y, color: CHART_COLORS.processValue, emphasis: true },
        ]}
      />
      <TimeChart
        title="Controller output"
        yLabel="Output"
        yUnit={units.output}
        height={180}
        series={[{ key: "u", label: "Output", t: response.t, v: response.u, color: CHART_COLORS.output, emphasis: true }]}
        limits={limitLines}
      />
      <p className="text-xs text-ink-faint">
        Set-point change at 0 s, load step at {formatTime(response.scenario.loadTime)} s; {response.scenario.samples.toLocaleString("en")} samples.
      </p>
    </div>
  );
}
