/**
 * Saturation: the share of time the controller output sat at a limit (high or low), its level
 * over 24 h and 7 d, and its trend. The trend is the Theil–Sen slope (Theil 1950, Sen 1968;
 * REFERENCES.md, "Loop health") of the hourly shares over the last 14 days: the median of all
 * pairwise slopes, so a few outlier windows (a start-up, a door left open) do not tilt it the way
 * they tilt least squares. From the slope and Sen's intercept, the time the fitted line reaches
 * the template's act limit.
 */
import { DAY_MS, endedWithin, HOUR_MS, sampleWeightedShare, type HealthDigest } from "./series";

type SaturationDigest = Pick<HealthDigest, "windowStart" | "windowEnd" | "samples" | "satHighFrac" | "satLowFrac">;

/** One window's share of samples at either output limit, capped at 1. */
export function windowSaturationShare(d: Pick<HealthDigest, "satHighFrac" | "satLowFrac">): number {
  return Math.min(1, Math.max(0, d.satHighFrac + d.satLowFrac));
}

/** Days of hourly values the trend is fitted over (the 14 days). */
export const SATURATION_TREND_DAYS = 14;

/**
 * Median of numbers by a typed-array sort (O(n log n)). Not mathjs's median: its partition
 * select is quadratic on equal values, and a flat saturation history (all zeros is the usual
 * one) gives 56 280 equal slopes over 14 days of hours: seconds per call (REFERENCES.md).
 */
export function medianOf(values: readonly number[]): number {
  const sorted = Float64Array.from(values).sort();
  const n = sorted.length;
  return n % 2 === 1 ? sorted[(n - 1) / 2] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
}

/** A point of a series: x in days since the epoch, y a share. */
export type TrendPoint = { day: number; value: number };

/**
 * Hourly sample-weighted saturation shares over (now − days, now], each at its hour's midpoint
 * (a window belongs to the hour its midpoint falls in), oldest first.
 */
export function hourlySaturation(digests: readonly SaturationDigest[], now: Date, days = SATURATION_TREND_DAYS): TrendPoint[] {
  const byHour = new Map<number, { samples: number; weighted: number }>();
  for (const d of endedWithin(digests, days * DAY_MS, now)) {
    if (!(d.samples > 0)) continue;
    const hour = Math.floor((d.windowStart.getTime() + d.windowEnd.getTime()) / 2 / HOUR_MS);
    const bucket = byHour.get(hour) ?? { samples: 0, weighted: 0 };
    bucket.samples += d.samples;
    bucket.weighted += windowSaturationShare(d) * d.samples;
    byHour.set(hour, bucket);
  }
  return [...byHour.entries()]
    .sort(([a], [b]) => a - b)
    .map(([hour, b]) => ({ day: ((hour + 0.5) * HOUR_MS) / DAY_MS, value: b.weighted / b.samples }));
}

/**
 * Theil–Sen line: slope = median of (yj − yi)/(xj − xi) over all pairs with xi ≠ xj (Theil 1950,
 * Sen 1968); intercept = median of yi − slope·xi (Sen's estimate, as scipy.stats.theilslopes
 * gives it). Null with fewer than two distinct x.
 */
export function theilSen(points: readonly TrendPoint[]): { slope: number; intercept: number } | null {
  const slopes: number[] = [];
  for (let i = 0; i < points.length; i++) {
    for (let j = i + 1; j < points.length; j++) {
      const dx = points[j].day - points[i].day;
      if (dx !== 0) slopes.push((points[j].value - points[i].value) / dx);
    }
  }
  if (slopes.length === 0) return null;
  const slope = medianOf(slopes);
  const intercept = medianOf(points.map((p) => p.value - slope * p.day));
  return { slope, intercept };
}

export type SaturationFigures = {
  /** Sample-weighted share at a limit over the last 24 h (null without samples). */
  share24h: number | null;
  /** The same over the last 7 days. */
  share7d: number | null;
  /** Theil–Sen slope of the hourly shares over 14 days, in share per day (null under two hours of data). */
  slopePerDay: number | null;
  /**
   * When the fitted line reaches the act limit: null when the slope is not rising (≤ 0) or
   * unknown; `now` when the line is already at or past the limit.
   */
  projectedActAt: Date | null;
};

export function assessSaturation(digests: readonly SaturationDigest[], actLimit: number, now: Date): SaturationFigures {
  const share = (span: number) => sampleWeightedShare(endedWithin(digests, span, now), windowSaturationShare);
  const line = theilSen(hourlySaturation(digests, now));
  let projectedActAt: Date | null = null;
  if (line && line.slope > 0) {
    const crossDay = (actLimit - line.intercept) / line.slope;
    projectedActAt = new Date(Math.max(now.getTime(), crossDay * DAY_MS));
  }
  return { share24h: share(DAY_MS), share7d: share(7 * DAY_MS), slopePerDay: line?.slope ?? null, projectedActAt };
}
