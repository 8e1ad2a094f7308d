import { Axis, buildChartTheme, Grid, LineSeries, Tooltip, XYChart } from "@visx/xychart";
import { useEffect, useMemo, useRef, useState } from "react";
import { ChartFigures, evenlySpacedIndices, nearestIndex } from "~/components/charts/chart-figures";
import { decimationIndices } from "~/lib/compute/bench";
import { formatNumber, formatTime } from "./format";

export type ChartSeries = {
  key: string;
  label: string;
  t: readonly number[];
  v: readonly number[];
  color: string;
  /** Thicker for the series the chart is about. */
  emphasis?: boolean;
};

/** A horizontal dashed line across the chart: an output limit. */
export type ChartLimit = { key: string; label: string; value: number; color: string };

type Datum = { x: number; y: number };

// The app.css tokens as values (visx themes take colours, not CSS variables). Every line meets
// 3:1 against the white chart background: measured 3.7 (rule-strong), the rest 6.8 or more.
export const CHART_COLORS = {
  measured: "#8a847c",
  model: "#0e5a5e",
  processValue: "#0e5a5e",
  setpoint: "#1f1d1a",
  output: "#8a4b14",
  limit: "#57534e",
} as const;

const theme = buildChartTheme({
  backgroundColor: "transparent",
  colors: [CHART_COLORS.model, CHART_COLORS.output, CHART_COLORS.setpoint],
  gridColor: "#ebe6dc",
  gridColorDark: "#8a847c",
  tickLength: 4,
  svgLabelSmall: { fill: "#57534e", fontSize: 11, fontFamily: "Inter, ui-sans-serif, sans-serif" },
  svgLabelBig: { fill: "#1f1d1a", fontSize: 12, fontFamily: "Inter, ui-sans-serif, sans-serif", fontWeight: 500 },
  xAxisLineStyles: { stroke: "#8a847c" },
  yAxisLineStyles: { stroke: "#8a847c" },
  xTickLineStyles: { stroke: "#8a847c" },
  yTickLineStyles: { stroke: "#8a847c" },
});

const x = (d: Datum) => d.x;
const y = (d: Datum) => d.y;
const MARGIN = { top: 10, right: 14, bottom: 42, left: 58 };

function withUnit(label: string, unit?: string) {
  return unit ? `${label} (${unit})` : label;
}

/**
 * A time-series chart: thin lines, labelled axes with units, limits dashed, a legend and a
 * tooltip with the exact values at the nearest sample. Long series are thinned for drawing
 * (peaks kept); the tooltip reads the thinned points.
 */
export function TimeChart({
  title,
  series,
  limits = [],
  yLabel,
  yUnit,
  height = 220,
}: {
  title: string;
  series: ChartSeries[];
  limits?: ChartLimit[];
  yLabel: string;
  yUnit?: string;
  height?: number;
}) {
  const prepared = useMemo(() => {
    let xMin = Infinity;
    let xMax = -Infinity;
    let yMin = Infinity;
    let yMax = -Infinity;
    const data = series.map((s) => {
      const idx = decimationIndices(s.t.length, [s.v], 900);
      const points: Datum[] = idx.map((i) => ({ x: s.t[i], y: s.v[i] }));
      for (const p of points) {
        if (p.x < xMin) xMin = p.x;
        if (p.x > xMax) xMax = p.x;
        if (Number.isFinite(p.y)) {
          if (p.y < yMin) yMin = p.y;
          if (p.y > yMax) yMax = p.y;
        }
      }
      return { ...s, points };
    });
    if (!(yMax > yMin)) {
      const pad = Math.abs(yMin) * 0.1 || 1;
      yMin -= pad;
      yMax += pad;
    }
    // A limit far from the data would flatten it: draw it only when it is near, say so otherwise.
    const span = yMax - yMin;
    const shown: (ChartLimit & { points: Datum[] })[] = [];
    const hidden: (ChartLimit & { side: "above" | "below" })[] = [];
    for (const limit of limits) {
      const near = limit.value >= yMin - 1.5 * span && limit.value <= yMax + 1.5 * span;
      if (near && Number.isFinite(xMin)) {
        yMin = Math.min(yMin, limit.value);
        yMax = Math.max(yMax, limit.value);
        shown.push({ ...limit, points: [{ x: xMin, y: limit.value }, { x: xMax, y: limit.value }] });
      } else hidden.push({ ...limit, side: limit.value > yMax ? "above" : "below" });
    }
    const pad = (yMax - yMin) * 0.06;
    return { data, shown, hidden, xDomain: [xMin, xMax] as [number, number], yDomain: [yMin - pad, yMax + pad] as [number, number] };
  }, [series, limits]);

  const figures = useMemo(() => {
    const times = series[0]?.t ?? [];
    const rows = evenlySpacedIndices(times.length, 11).map((i) => [
      formatTime(times[i]),
      ...series.map((s) => (s.t.length ? formatNumber(s.v[nearestIndex(s.t, times[i])], 4) : "–")),
    ]);
    // The limits are already written out in the legend above.
    return { headers: ["Time (s)", ...series.map((s) => withUnit(s.label, yUnit))], rows };
  }, [series, yUnit]);

  const lineKeys = new Set(prepared.shown.map((l) => l.key));
  // Measured here rather than by XYChart's own wrapper, which misreads widths inside grids.
  const box = useRef<HTMLDivElement>(null);
  const [width, setWidth] = useState(0);
  useEffect(() => {
    const element = box.current;
    if (!element) return;
    // The first width at once; later ones once resizing pauses, so a passing layout does not redraw.
    let timer: ReturnType<typeof setTimeout> | undefined;
    let measured = false;
    const observer = new ResizeObserver(([entry]) => {
      const next = Math.floor(entry.contentRect.width);
      clearTimeout(timer);
      if (!measured) {
        measured = true;
        setWidth(next);
      } else timer = setTimeout(() => setWidth(next), 120);
    });
    observer.observe(element);
    return () => {
      clearTimeout(timer);
      observer.disconnect();
    };
  }, []);

  return (
    <figure className="min-w-0">
      <figcaption className="flex flex-wrap items-baseline justify-between gap-x-4 gap-y-1">
        <span className="text-sm font-medium text-ink">{title}</span>
        <ul className="flex flex-wrap gap-x-3 gap-y-1 text-xs text-ink-soft" aria-label={`${title}: legend`}>
          {prepared.data.map((s) => (
            <li key={s.key} className="flex items-center gap-1.5">
              <svg width="18" height="6" aria-hidden="true">
                <line x1="0" x2="18" y1="3" y2="3" stroke={s.color} strokeWidth={s.emphasis ? 2 : 1.5} />
              </svg>
              {s.label}
            </li>
          ))}
          {prepared.shown.map((l) => (
            <li key={l.key} className="flex items-center gap-1.5">
              <svg width="18" height="6" aria-hidden="true">
                <line x1="0" x2="18" y1="3" y2="3" stroke={l.color} strokeWidth={1.25} strokeDasharray="4 3" />
              </svg>
              {l.label} <span className="tabular">{formatNumber(l.value, 4)}</span>
              {yUnit ? <span className="text-ink-faint">{yUnit}</span> : null}
            </li>
          ))}
          {prepared.hidden.map((l) => (
            <li key={l.key} className="text-ink-faint">
              {l.label} <span className="tabular">{formatNumber(l.value, 4)}</span> {yUnit} ({l.side} the chart)
            </li>
          ))}
        </ul>
      </figcaption>
      <div ref={box} className="relative mt-1 w-full overflow-hidden" style={{ height }}>
        {width > 0 ? (
        <XYChart
          width={width}
          height={height}
          margin={MARGIN}
          theme={theme}
          xScale={{ type: "linear", domain: prepared.xDomain }}
          yScale={{ type: "linear", domain: prepared.yDomain, nice: true, zero: false }}
          pointerEventsDataKey="all"
          accessibilityLabel={`${title}: ${prepared.data.map((s) => s.label).join(", ")} against time`}
        >
          <Grid columns={false} numTicks={4} lineStyle={{ strokeWidth: 1 }} />
          <Axis orientation="bottom" numTicks={6} label="Time (s)" tickFormat={(v) => formatTime(Number(v))} labelOffset={10} />
          <Axis orientation="left" numTicks={4} label={withUnit(yLabel, yUnit)} tickFormat={(v) => formatNumber(Number(v), 4)} labelOffset={22} />
          {prepared.shown.map((l) => (
            <LineSeries key={l.key} dataKey={l.key} data={l.points} xAccessor={x} yAccessor={y} stroke={l.color} strokeWidth={1.25} strokeDasharray="5 4" />
          ))}
          {prepared.data.map((s) => (
            <LineSeries key={s.key} dataKey={s.key} data={s.points} xAccessor={x} yAccessor={y} stroke={s.color} strokeWidth={s.emphasis ? 1.75 : 1.25} />
          ))}
          <Tooltip<Datum>
            snapTooltipToDatumX
            showVerticalCrosshair
            showSeriesGlyphs
            verticalCrosshairStyle={{ stroke: "#8a847c", strokeWidth: 1 }}
            glyphStyle={{ fill: "#ffffff", strokeWidth: 1.5 }}
            renderGlyph={({ key, x: gx, y: gy }) =>
              lineKeys.has(key) ? null : (
                <circle cx={gx} cy={gy} r={3} fill="#fff" stroke={prepared.data.find((s) => s.key === key)?.color ?? "#1f1d1a"} strokeWidth={1.5} />
              )
            }
            unstyled
            applyPositionStyle
            className="rounded-md border border-rule bg-white px-2.5 py-1.5 text-xs text-ink shadow-sm pointer-events-none z-30"
            renderTooltip={({ tooltipData }) => {
              const nearest = tooltipData?.nearestDatum?.datum;
              if (!nearest) return null;
              return (
                <div className="space-y-0.5">
                  <div className="font-medium">
                    t = <span className="tabular">{formatTime(nearest.x)}</span> <span className="text-ink-faint">s</span>
                  </div>
                  {prepared.data.map((s) => {
                    const d = tooltipData?.datumByKey[s.key]?.datum;
                    return d ? (
                      <div key={s.key} className="flex items-center justify-between gap-3">
                        <span className="flex items-center gap-1.5 text-ink-soft">
                          <svg width="12" height="6" aria-hidden="true"><line x1="0" x2="12" y1="3" y2="3" stroke={s.color} strokeWidth={2} /></svg>
                          {s.label}
                        </span>
                        <span className="tabular">
                          {formatNumber(d.y, 4)}
                          {yUnit ? <span className="text-ink-faint"> {yUnit}</span> : null}
                        </span>
                      </div>
                    ) : null;
                  })}
                </div>
              );
            }}
          />
        </XYChart>
        ) : null}
      </div>
      <ChartFigures title={title} headers={figures.headers} rows={figures.rows} />
    </figure>
  );
}
