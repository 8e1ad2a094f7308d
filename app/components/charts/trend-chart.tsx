// A thin-line trend over time (visx): axes with labels and units, a dashed threshold, a
// tooltip with the exact value and time. Sized to its container, so it reads at 390 px.
import { SizedBox } from "~/components/charts/sized-box";
import { Axis, Grid, LineSeries, Tooltip, XYChart } from "@visx/xychart";
import { ChartFigures, evenlySpacedIndices } from "~/components/charts/chart-figures";

export type TrendPoint = { t: number; v: number };

const accessors = { xAccessor: (d: TrendPoint) => new Date(d.t), yAccessor: (d: TrendPoint) => d.v };
const timeFormat = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", hour: "2-digit", minute: "2-digit", timeZone: "UTC" });
const dayTick = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", timeZone: "UTC" });
const hourTick = new Intl.DateTimeFormat("en-GB", { hour: "2-digit", minute: "2-digit", timeZone: "UTC" });

export function TrendChart({
  title,
  unit,
  points,
  threshold,
  thresholdLabel,
  format = (v) => v.toPrecision(3),
  height = 180,
  domainMax,
}: {
  title: string;
  unit: string;
  points: TrendPoint[];
  threshold?: number;
  thresholdLabel?: string;
  format?: (v: number) => string;
  height?: number;
  domainMax?: number;
}) {
  const max = Math.max(domainMax ?? 0, threshold !== undefined ? threshold * 1.2 : 0, ...points.map((p) => p.v), 1e-9);
  const spanMs = points.length > 1 ? points[points.length - 1].t - points[0].t : 0;
  const tick = spanMs > 2 * 86_400_000 ? dayTick : hourTick;
  const thresholdLine = threshold !== undefined && points.length > 1 ? [{ t: points[0].t, v: threshold }, { t: points[points.length - 1].t, v: threshold }] : [];
  return (
    <figure className="min-w-0">
      <figcaption className="flex items-baseline justify-between text-xs">
        <span className="font-medium text-ink">{title}</span>
        {thresholdLabel ? (
          <span className="flex items-center gap-1 text-ink-faint">
            <svg width="18" height="4" aria-hidden="true"><line x1="0" x2="18" y1="2" y2="2" stroke="var(--color-act)" strokeDasharray="3 3" /></svg>
            {thresholdLabel}
          </span>
        ) : null}
      </figcaption>
      {points.length === 0 ? (
        <p className="mt-2 flex items-center justify-center rounded-md border border-dashed border-rule text-xs text-ink-faint" style={{ height }}>
          No digests in this range.
        </p>
      ) : (
        <SizedBox height={height}>
        {(width) => (
        <XYChart width={width} height={height} accessibilityLabel={`${title} (${unit}) over time`} margin={{ top: 10, right: 12, bottom: 28, left: 48 }} xScale={{ type: "time" }} yScale={{ type: "linear", domain: [0, max], nice: true }}>
          <Grid columns={false} numTicks={4} lineStyle={{ stroke: "var(--color-rule)", strokeWidth: 1 }} />
          <Axis orientation="bottom" numTicks={3} tickFormat={(d: Date) => tick.format(d)} tickLabelProps={() => ({ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "middle" })} stroke="var(--color-rule-strong)" tickStroke="var(--color-rule-strong)" />
          <Axis
            orientation="left"
            numTicks={4}
            label={unit}
            labelProps={{ fontSize: 10, fill: "var(--color-ink-faint)" }}
            tickFormat={(v: number) => format(v)}
            tickLabelProps={() => ({ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "end", dx: -2, dy: 3 })}
            stroke="var(--color-rule-strong)"
            tickStroke="var(--color-rule-strong)"
          />
          {thresholdLine.length ? <LineSeries dataKey="threshold" data={thresholdLine} {...accessors} stroke="var(--color-act)" strokeDasharray="4 4" strokeWidth={1} /> : null}
          <LineSeries dataKey={title} data={points} {...accessors} stroke="var(--color-accent)" strokeWidth={1.25} />
          <Tooltip<TrendPoint>
            snapTooltipToDatumX
            showVerticalCrosshair
            verticalCrosshairStyle={{ stroke: "var(--color-ink-faint)", strokeDasharray: "2 2" }}
            renderTooltip={({ tooltipData }) => {
              const d = tooltipData?.datumByKey[title]?.datum;
              if (!d) return null;
              return (
                <div className="text-xs">
                  <div className="font-medium tabular">{format(d.v)} <span className="text-ink-faint">{unit}</span></div>
                  <div className="text-ink-faint">{timeFormat.format(new Date(d.t))} UTC</div>
                </div>
              );
            }}
          />
        </XYChart>
        )}
        </SizedBox>
      )}
      {points.length > 0 ? (
        <ChartFigures
          title={title}
          summary={describeTrend(points, unit, format, threshold, thresholdLabel)}
          headers={["Time (UTC)", `${title} (${unit})`]}
          rows={evenlySpacedIndices(points.length, 12).map((i) => [timeFormat.format(new Date(points[i].t)), format(points[i].v)])}
        />
      ) : null}
    </figure>
  );
}

/** One sentence with what the chart shows: how many points, over what time, their range. */
function describeTrend(points: TrendPoint[], unit: string, format: (v: number) => string, threshold?: number, thresholdLabel?: string) {
  const values = points.map((p) => p.v);
  const range = `${timeFormat.format(new Date(points[0].t))} to ${timeFormat.format(new Date(points[points.length - 1].t))} UTC`;
  const limit = threshold !== undefined ? `; ${thresholdLabel ?? "threshold"} ${format(threshold)} ${unit}` : "";
  return `${points.length} points from ${range}, lowest ${format(Math.min(...values))}, highest ${format(Math.max(...values))} ${unit}${limit}.`;
}

