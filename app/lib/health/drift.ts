/**
 * Drift: a two-sided tabular CUSUM (Page 1954; the tabular form of Montgomery, Introduction to
 * Statistical Quality Control) on the loop's IAE per second of window — windows differ in length,
 * so IAE is divided by each window's seconds. Values are standardised against a baseline learnt
 * from the first N windows after the last applied gain change (a change of gainVersion, in window
 * order): z = (x − mean)/std, the sample mean and standard deviation of those N windows. Then
 *
 *   S⁺ₜ = max(0, S⁺ₜ₋₁ + zₜ − k)      S⁻ₜ = max(0, S⁻ₜ₋₁ − zₜ − k)      S⁺₀ = S⁻₀ = 0
 *
 * over the windows after the baseline, k and h in baseline standard deviations (Montgomery's
 * K = kσ and H = hσ). The loop is drifting while either sum exceeds h. Before N windows there
 * is no judgement ("learning"); each gain change starts learning again.
 *
 * The average run length of this scheme is given by Siegmund's approximation (`cusumArl`;
 * REFERENCES.md, "Page 1954"): for k = 0.5, h = 5, about 469 windows between false alarms for the
 * two-sided scheme (938 for each side alone) and about 10.3 windows to flag a shift of 1 std.
 */
import { inWindowOrder, windowSeconds, type HealthDigest } from "./series";

export type DriftSettings = {
  /** Windows after a gain change that form the baseline (N). */
  baselineWindows: number;
  /** Reference value k, in baseline standard deviations (half the shift to detect fastest). */
  k: number;
  /** Decision interval h, in baseline standard deviations. */
  h: number;
};

/** Defaults: N = 24 (the issue), k = 0.5 and h = 5 (Montgomery's recommended pair; memory). */
export const DEFAULT_DRIFT_SETTINGS: DriftSettings = { baselineWindows: 24, k: 0.5, h: 5 };

export type CusumState = { high: number; low: number };

/** One step of the two-sided tabular CUSUM on a standardised value (Page 1954). */
export function stepCusum(state: CusumState, z: number, k: number): CusumState {
  return { high: Math.max(0, state.high + z - k), low: Math.max(0, state.low - z - k) };
}

/**
 * Siegmund's approximation (Siegmund 1985) of one side's average run length for a shift δ in
 * standard deviations: (e^(−2Δb) + 2Δb − 1)/(2Δ²), Δ = δ − k, b = h + 1.166; b² when Δ = 0.
 */
export function oneSidedArl(shift: number, k: number, h: number): number {
  const delta = shift - k;
  const b = h + 1.166;
  if (Math.abs(delta) < 1e-12) return b * b;
  return (Math.exp(-2 * delta * b) + 2 * delta * b - 1) / (2 * delta * delta);
}

/** The two-sided scheme's run length: 1/ARL = 1/ARL⁺(δ) + 1/ARL⁻ (the low side sees −δ). */
export function cusumArl(shift: number, k: number, h: number): number {
  return 1 / (1 / oneSidedArl(shift, k, h) + 1 / oneSidedArl(-shift, k, h));
}

export type DriftState = "learning" | "in_control" | "drifting";

export type DriftFigures = {
  state: DriftState;
  /** Baseline mean IAE per second (null while learning). */
  baselineMean: number | null;
  /** Baseline sample standard deviation of IAE per second (null while learning). */
  baselineStd: number | null;
  /** S⁺ and S⁻ after the latest window, in baseline standard deviations. */
  cusumHigh: number;
  cusumLow: number;
  /** The decision interval h the sums are judged against. */
  limit: number;
  /** The gain version the baseline belongs to (null without a window). */
  sinceGainVersion: number | null;
  /** Windows in the baseline so far (≤ N). */
  baselineCount: number;
  /** Windows judged after the baseline. */
  monitoredWindows: number;
  /** The first judged window at which a sum exceeded h since this baseline: its number (1-based) and end. */
  firstSignal: { window: number; at: Date } | null;
};

type DriftDigest = Pick<HealthDigest, "windowStart" | "windowEnd" | "samples" | "iae" | "gainVersion">;

/**
 * A standard deviation of zero (a perfectly constant baseline) would make every change infinite;
 * it is floored at 1e-9 of the mean (or 1e-12 absolute) so a later change still signals.
 */
function flooredStd(std: number, mean: number): number {
  return Math.max(std, 1e-9 * Math.abs(mean), 1e-12);
}

/** Judged in window order whatever the arrival order (series.ts, inWindowOrder); windows ending after now are ignored. */
export function assessDrift(digests: readonly DriftDigest[], now: Date, settings: DriftSettings = DEFAULT_DRIFT_SETTINGS): DriftFigures {
  const { baselineWindows: n, k, h } = settings;
  const seen = inWindowOrder(digests).filter((d) => d.windowEnd.getTime() <= now.getTime() && windowSeconds(d) > 0 && d.samples > 0);
  const figures: DriftFigures = {
    state: "learning",
    baselineMean: null,
    baselineStd: null,
    cusumHigh: 0,
    cusumLow: 0,
    limit: h,
    sinceGainVersion: null,
    baselineCount: 0,
    monitoredWindows: 0,
    firstSignal: null,
  };
  if (seen.length === 0) return figures;
  const version = seen[seen.length - 1].gainVersion;
  let from = seen.length - 1;
  while (from > 0 && seen[from - 1].gainVersion === version) from--;
  const segment = seen.slice(from);
  const rate = segment.map((d) => d.iae / windowSeconds(d));
  figures.sinceGainVersion = version;
  figures.baselineCount = Math.min(n, segment.length);
  if (segment.length < n || n < 2) return figures;

  const baseline = rate.slice(0, n);
  const mean = baseline.reduce((a, b) => a + b, 0) / n;
  const std = Math.sqrt(baseline.reduce((a, b) => a + (b - mean) ** 2, 0) / (n - 1));
  const scale = flooredStd(std, mean);
  let state: CusumState = { high: 0, low: 0 };
  for (let i = n; i < segment.length; i++) {
    state = stepCusum(state, (rate[i] - mean) / scale, k);
    if (!figures.firstSignal && (state.high > h || state.low > h)) figures.firstSignal = { window: i - n + 1, at: segment[i].windowEnd };
  }
  return {
    ...figures,
    state: state.high > h || state.low > h ? "drifting" : "in_control",
    baselineMean: mean,
    baselineStd: std,
    cusumHigh: state.high,
    cusumLow: state.low,
    monitoredWindows: segment.length - n,
  };
}
