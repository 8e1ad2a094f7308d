// The fleet's 30-day health trend: per day, how many loops were in each band (visx stacked
// bars). Axes with labels and units, a tooltip with the exact counts and the date, a legend,
// and the figures as a table under it. Sized to its container, so it reads at 390 px.
import { Axis, BarSeries, BarStack, Grid, Tooltip, XYChart } from "@visx/xychart";
import { ChartFigures } from "~/components/charts/chart-figures";
import { SizedBox } from "~/components/charts/sized-box";
import type { HealthBand } from "~/lib/health";
import type { Overview } from "~/lib/health/api-types";

type Day = Overview["trend"][number];

/** Bottom to top: act on the baseline, so its count reads straight off the axis, steady on top. */
const STACK: HealthBand[] = ["act", "watch", "silent", "steady"];
const WORDS: Record<HealthBand, string> = { steady: "Steady", watch: "Watch", act: "Act", silent: "Silent" };
const ICONS: Record<HealthBand, string> = { steady: "●", watch: "▲", act: "■", silent: "○" };
const FILL: Record<HealthBand, string> = {
  steady: "var(--color-steady)",
  watch: "var(--color-watch)",
  act: "var(--color-act)",
  silent: "var(--color-silent)",
};

const dayFormat = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", timeZone: "UTC" });
const longDay = new Intl.DateTimeFormat("en-GB", { weekday: "short", day: "numeric", month: "short", year: "numeric", timeZone: "UTC" });
const dayOf = (d: Day) => dayFormat.format(new Date(`${d.day.slice(0, 10)}T00:00:00Z`));

export function HealthTrendChart({ trend, height = 220 }: { trend: Day[]; height?: number }) {
  const title = "Loops by health, per day";
  return (
    <figure className="min-w-0">
      <figcaption className="flex flex-wrap items-baseline justify-between gap-2 text-xs">
        <span className="font-medium text-ink">{title}</span>
        <ul className="flex flex-wrap gap-3 text-ink-soft" aria-label="Legend">
          {STACK.slice().reverse().map((band) => (
            <li key={band} className="flex items-center gap-1">
              <span aria-hidden="true" style={{ color: FILL[band] }}>{ICONS[band]}</span>
              {WORDS[band]}
            </li>
          ))}
        </ul>
      </figcaption>
      {trend.length === 0 ? (
        <p className="mt-2 flex items-center justify-center rounded-md border border-dashed border-rule px-4 text-center text-xs text-ink-faint" style={{ height }}>
          No daily health snapshots yet. The first one is taken after a day of digests.
        </p>
      ) : (
        <SizedBox height={height}>
          {(width) => {
            const tickEvery = Math.max(1, Math.ceil(trend.length / Math.max(2, Math.floor(width / 70))));
            const ticks = trend.filter((_, i) => i % tickEvery === 0).map(dayOf);
            return (
              <XYChart
                width={width}
                height={height}
                accessibilityLabel={`${title}, ${trend.length} days`}
                margin={{ top: 10, right: 8, bottom: 42, left: 56 }}
                xScale={{ type: "band", paddingInner: 0.25 }}
                yScale={{ type: "linear", nice: true }}
              >
                <Grid columns={false} numTicks={4} lineStyle={{ stroke: "var(--color-rule)", strokeWidth: 1 }} />
                <BarStack>
                  {STACK.map((band) => (
                    <BarSeries key={band} dataKey={band} data={trend} xAccessor={dayOf} yAccessor={(d: Day) => d[band]} colorAccessor={() => FILL[band]} />
                  ))}
                </BarStack>
                <Axis
                  orientation="bottom"
                  tickValues={ticks}
                  label="Day (UTC)"
                  labelOffset={14}
                  labelProps={{ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "middle" }}
                  tickLabelProps={() => ({ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "middle" })}
                  stroke="var(--color-rule-strong)"
                  tickStroke="var(--color-rule-strong)"
                />
                <Axis
                  orientation="left"
                  numTicks={4}
                  label="loops"
                  labelOffset={30}
                  labelProps={{ fontSize: 10, fill: "var(--color-ink-faint)" }}
                  tickFormat={(v: number) => String(v)}
                  tickLabelProps={() => ({ fontSize: 10, fill: "var(--color-ink-faint)", textAnchor: "end", dx: -2, dy: 3 })}
                  stroke="var(--color-rule-strong)"
                  tickStroke="var(--color-rule-strong)"
                />
                <Tooltip<Day>
                  snapTooltipToDatumX
                  renderTooltip={({ tooltipData }) => {
                    const d = tooltipData?.nearestDatum?.datum;
                    if (!d) return null;
                    return (
                      <div className="text-xs">
                        <div className="font-medium">{longDay.format(new Date(`${d.day.slice(0, 10)}T00:00:00Z`))}</div>
                        <table className="mt-1 tabular">
                          <tbody>
                            {STACK.slice().reverse().map((band) => (
                              <tr key={band}>
                                <td className="pr-2" style={{ color: FILL[band] }}>{ICONS[band]} {WORDS[band]}</td>
                                <td className="text-right">{d[band]}</td>
                                <td className="pl-1 text-ink-faint">loops</td>
                              </tr>
                            ))}
                          </tbody>
                        </table>
                      </div>
                    );
                  }}
                />
              </XYChart>
            );
          }}
        </SizedBox>
      )}
      {trend.length > 0 ? (
        <ChartFigures
          title={title}
          summary={describe(trend)}
          headers={["Day (UTC)", "Steady (loops)", "Watch (loops)", "Act (loops)", "Silent (loops)"]}
          rows={trend.map((d) => [longDay.format(new Date(`${d.day.slice(0, 10)}T00:00:00Z`)), String(d.steady), String(d.watch), String(d.act), String(d.silent)])}
        />
      ) : null}
    </figure>
  );
}

function describe(trend: Day[]): string {
  const first = trend[0];
  const last = trend[trend.length - 1];
  return `${trend.length} days from ${dayOf(first)} to ${dayOf(last)}. On the last day: ${last.steady} steady, ${last.watch} watch, ${last.act} act, ${last.silent} silent loops (on the first: ${first.act} act, ${first.watch} watch).`;
}
