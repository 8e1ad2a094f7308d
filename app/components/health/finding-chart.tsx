// A finding's metric over time (visx): the hourly values as a thin line, the threshold it
// crossed as a dashed line and the window that tripped it shaded; a tooltip with the exact
// value and hour, and the figures as a table. Sized to its container (reads at 390 px).
import { useContext } from "react";
import { Axis, DataContext, Grid, LineSeries, Tooltip, XYChart } from "@visx/xychart";
import { ChartFigures, evenlySpacedIndices } from "~/components/charts/chart-figures";
import { SizedBox } from "~/components/charts/sized-box";

export type SeriesPoint = { t: number; v: number };

const accessors = { xAccessor: (d: SeriesPoint) => new Date(d.t), yAccessor: (d: SeriesPoint) => d.v };
const timeFormat = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", hour: "2-digit", minute: "2-digit", timeZone: "UTC" });
const dayTick = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", timeZone: "UTC" });
const hourTick = new Intl.DateTimeFormat("en-GB", { hour: "2-digit", minute: "2-digit", timeZone: "UTC" });

/** The tripping window, drawn inside the chart with its scales. */
function WindowShade({ start, end }: { start: number; end: number }) {
  const { xScale, yScale } = useContext(DataContext);
  if (!xScale || !yScale) return null;
  const x = xScale as unknown as (v: Date) => number;
  const [y0, y1] = (yScale.range() as number[]).map(Number);
  const left = x(new Date(start));
  const right = x(new Date(end));
  if (!Number.isFinite(left) || !Number.isFinite(right)) return null;
  return <rect x={Math.min(left, right)} width={Math.max(2, Math.abs(right - left))} y={Math.min(y0, y1)} height={Math.abs(y0 - y1)} fill="var(--color-act)" fillOpacity={0.1} />;
}

export function FindingChart({
  title,
  unit,
  points,
  threshold,
  window,
  format = (v) => Number(v.toPrecision(3)).toString(),
  height = 220,
}: {
  title: string;
  unit: string;
  points: SeriesPoint[];
  threshold: number | null;
  window: { start: number; end: number } | null;
  format?: (v: number) => string;
  height?: number;
}) {
  const values = points.map((p) => p.v);
  const max = Math.max(threshold !== null ? threshold * 1.15 : 0, ...values, 1e-9);
  const min = Math.min(0, ...values);
  const spanMs = points.length > 1 ? points[points.length - 1].t - points[0].t : 0;
  const tick = spanMs > 2 * 86_400_000 ? dayTick : hourTick;
  const thresholdLine = threshold !== null && points.length > 1 ? [{ t: points[0].t, v: threshold }, { t: points[points.length - 1].t, v: threshold }] : [];
  return (
    <figure className="min-w-0">
      <figcaption className="flex flex-wrap items-baseline justify-between gap-2 text-xs">
        <span className="font-medium text-ink">{title}</span>
        <span className="flex flex-wrap items-center gap-3 text-ink-faint">
          <span className="flex items-center gap-1">
            <svg width="18" height="4" aria-hidden="true"><line x1="0" x2="18" y1="2" y2="2" stroke="var(--color-accent)" strokeWidth="1.5" /></svg>
            hourly value
          </span>
          {threshold !== null ? (
            <span className="flex items-center gap-1">
              <svg width="18" height="4" aria-hidden="true"><line x1="0" x2="18" y1="2" y2="2" stroke="var(--color-act)" strokeDasharray="3 3" /></svg>
              threshold
            </span>
          ) : null}
          {window ? (
            <span className="flex items-center gap-1">
              <span aria-hidden="true" className="inline-block h-2.5 w-3 bg-act/10 ring-1 ring-act/30" />
              window that tripped it
            </span>
          ) : null}
        </span>
      </figcaption>
      {points.length === 0 ? (
        <p className="mt-2 flex items-center justify-center rounded-md border border-dashed border-rule px-4 text-center text-xs text-ink-faint" style={{ height }}>
          No hourly values for this metric yet.
        </p>
      ) : (
        <SizedBox height={height}>
          {(width) => (
            <XYChart width={width} height={height} accessibilityLabel={`${title} (${unit}) over time`} margin={{ top: 10, right: 12, bottom: 42, left: 60 }} xScale={{ type: "time" }} yScale={{ type: "linear", domain: [min, max], nice: true }}>
              <Grid columns={false} numTicks={4} lineStyle={{ stroke: "var(--color-rule)", strokeWidth: 1 }} />
              {window ? <WindowShade start={window.start} end={window.end} /> : null}
              <Axis orientation="bottom" numTicks={Math.max(2, Math.min(5, Math.floor(width / 90)))} label="Time (UTC)" labelOffset={14} labelProps={{ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "middle" }} tickFormat={(d: Date) => tick.format(d)} tickLabelProps={() => ({ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "middle" })} stroke="var(--color-rule-strong)" tickStroke="var(--color-rule-strong)" />
              <Axis orientation="left" numTicks={4} label={unit} labelOffset={34} labelProps={{ fontSize: 10, fill: "var(--color-ink-faint)" }} tickFormat={(v: number) => format(v)} tickLabelProps={() => ({ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "end", dx: -2, dy: 3 })} stroke="var(--color-rule-strong)" tickStroke="var(--color-rule-strong)" />
              {thresholdLine.length ? <LineSeries dataKey="threshold" data={thresholdLine} {...accessors} stroke="var(--color-act)" strokeDasharray="4 4" strokeWidth={1} /> : null}
              <LineSeries dataKey={title} data={points} {...accessors} stroke="var(--color-accent)" strokeWidth={1.5} />
              <Tooltip<SeriesPoint>
                snapTooltipToDatumX
                showVerticalCrosshair
                verticalCrosshairStyle={{ stroke: "var(--color-ink-faint)", strokeDasharray: "2 2" }}
                renderTooltip={({ tooltipData }) => {
                  const d = tooltipData?.datumByKey[title]?.datum;
                  if (!d) return null;
                  return (
                    <div className="text-xs">
                      <div className="font-medium tabular">{format(d.v)} <span className="text-ink-faint">{unit}</span></div>
                      {threshold !== null ? <div className="tabular text-ink-faint">threshold {format(threshold)} {unit}</div> : null}
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
          summary={`${points.length} hourly values from ${timeFormat.format(new Date(points[0].t))} to ${timeFormat.format(new Date(points[points.length - 1].t))} UTC, lowest ${format(Math.min(...values))}, highest ${format(Math.max(...values))} ${unit}${threshold !== null ? `; threshold ${format(threshold)} ${unit}` : ""}${window ? `; tripped in the window ${timeFormat.format(new Date(window.start))} to ${timeFormat.format(new Date(window.end))} UTC` : ""}.`}
          headers={["Hour (UTC)", `${title} (${unit})`]}
          rows={evenlySpacedIndices(points.length, 24).map((i) => [timeFormat.format(new Date(points[i].t)), format(points[i].v)])}
        />
      ) : null}
    </figure>
  );
}
