/**
 * Open-loop unit-step response of a continuous plant with step information.
 *
 * Samples come from the exact ZOH discretisation (exact for a step input), then every
 * characteristic time is refined between samples by bisection on the exact continuous
 * response y(t) = C·∫₀^{t−θ} e^{As} ds·B + D, so the figures do not depend on the grid.
 */
import { ControlInputError, requirePositive } from "./errors";
import {
  computeHoldIntegral,
  createPlantSimulator,
  discretisePlant,
  toStateSpace,
  toTransferFunction,
  type PlantModel,
  type TransferFunction,
} from "./plant";
import { evaluatePolynomialReal, findPolynomialRoots } from "./polynomial";

export interface StepInfo {
  /** 10–90 % of the steady state; null without a steady state or if not reached. */
  riseTime: number | null;
  /** Time from the step until y stays within 2 % of the steady state; null if not within the window. */
  settlingTime: number | null;
  /** Percent above the steady state (0 when monotonic or no steady state). */
  overshootPercent: number;
  /** Largest |y| in the window, with its sign. */
  peak: number;
  peakTime: number;
  /** Final value (DC gain) for a stable plant, else null. */
  steadyState: number | null;
}

export interface StepResponse {
  t: number[];
  y: number[];
  info: StepInfo;
}

export interface StepResponseOptions {
  /** Seconds; default from the plant's slowest pole and dead time (see defaultStepDuration). */
  duration?: number;
  /** Number of samples, default 2001. */
  points?: number;
}

/**
 * A window that shows the whole response: dead time plus ten times the slowest stable
 * time constant (1/|Re p|). For an integrating or unstable plant there is no settling, so
 * the window is dead time plus ten of the remaining time constants, or 10·max(θ, 1 s).
 */
export function defaultStepDuration(plant: PlantModel): number {
  const tf = toTransferFunction(plant);
  const poles = findPolynomialRoots(tf.denominator);
  let slowest = 0;
  let fastestUnstable = 0;
  for (const p of poles) {
    const magnitude = Math.hypot(p.re, p.im);
    if (magnitude < 1e-12) continue;
    if (p.re < 0) slowest = Math.max(slowest, -1 / p.re);
    else fastestUnstable = Math.max(fastestUnstable, p.re);
  }
  if (fastestUnstable > 0) return tf.deadTime + 5 / fastestUnstable;
  if (slowest > 0) return tf.deadTime + 10 * slowest;
  return 10 * Math.max(tf.deadTime, 1);
}

/** DC gain num(0)/den(0) when every pole is in the open left half-plane, else null. */
export function computeSteadyStateGain(tf: TransferFunction): number | null {
  const poles = findPolynomialRoots(tf.denominator);
  if (poles.some((p) => p.re >= -1e-12)) return null;
  return evaluatePolynomialReal(tf.numerator, 0) / evaluatePolynomialReal(tf.denominator, 0);
}

/** Exact unit-step response and its slope at time t (continuous time). */
export function createExactStepEvaluator(plant: PlantModel): (t: number) => { y: number; slope: number } {
  const tf = toTransferFunction(plant);
  const ss = toStateSpace(tf);
  const n = ss.a.length;
  return (t: number) => {
    const s = t - tf.deadTime;
    if (s < 0) return { y: 0, slope: 0 };
    const { phi, gamma } = computeHoldIntegral(ss, s);
    let y = ss.d;
    let slope = 0;
    for (let i = 0; i < n; i++) {
      y += ss.c[i] * gamma[i];
      let row = 0;
      for (let j = 0; j < n; j++) row += phi[i][j] * ss.b[j];
      slope += ss.c[i] * row;
    }
    return { y, slope };
  };
}

function bisect(f: (t: number) => number, lo: number, hi: number): number {
  let flo = f(lo);
  for (let i = 0; i < 60; i++) {
    const mid = 0.5 * (lo + hi);
    const fm = f(mid);
    if (fm === 0) return mid;
    if (Math.sign(fm) === Math.sign(flo)) {
      lo = mid;
      flo = fm;
    } else hi = mid;
    if (hi - lo <= 1e-13 * Math.max(1, hi)) break;
  }
  return 0.5 * (lo + hi);
}

export function computeStepResponse(plant: PlantModel, options: StepResponseOptions = {}): StepResponse {
  const duration = options.duration ?? defaultStepDuration(plant);
  requirePositive("duration", duration);
  const points = options.points ?? 2001;
  if (!Number.isInteger(points) || points < 10) throw new ControlInputError("points", "must be an integer of at least 10");
  const h = duration / (points - 1);
  const simulator = createPlantSimulator(discretisePlant(plant, h), 0, points);
  const t = new Array<number>(points);
  const y = new Array<number>(points);
  for (let k = 0; k < points; k++) {
    t[k] = k * h;
    y[k] = simulator.output();
    simulator.advance(1);
  }
  const exact = createExactStepEvaluator(plant);
  return { t, y, info: computeStepInfo(t, y, computeSteadyStateGain(toTransferFunction(plant)), exact) };
}

function computeStepInfo(
  t: number[],
  y: number[],
  steadyState: number | null,
  exact: (t: number) => { y: number; slope: number },
): StepInfo {
  const n = t.length;
  const sign = steadyState !== null && steadyState !== 0 ? Math.sign(steadyState) : 1;
  // Peak: largest signed excursion; refined on the zero of the slope when it is interior.
  let iPeak = 0;
  for (let k = 1; k < n; k++) if (sign * y[k] > sign * y[iPeak]) iPeak = k;
  let peak = y[iPeak];
  let peakTime = t[iPeak];
  if (iPeak > 0 && iPeak < n - 1) {
    const lo = t[iPeak - 1];
    const hi = t[iPeak + 1];
    const slopeLo = exact(lo).slope;
    const slopeHi = exact(hi).slope;
    if (sign * slopeLo > 0 && sign * slopeHi < 0) {
      peakTime = bisect((s) => exact(s).slope, lo, hi);
      peak = exact(peakTime).y;
    }
  }
  if (steadyState === null || steadyState === 0) {
    return { riseTime: null, settlingTime: null, overshootPercent: 0, peak, peakTime, steadyState };
  }
  const ss = steadyState;
  const crossing = (level: number): number | null => {
    const target = level * ss;
    for (let k = 1; k < n; k++) {
      if (sign * (y[k] - target) >= 0) return bisect((s) => exact(s).y - target, t[k - 1], t[k]);
    }
    return null;
  };
  const t10 = crossing(0.1);
  const t90 = crossing(0.9);
  const riseTime = t10 !== null && t90 !== null ? t90 - t10 : null;
  const band = 0.02 * Math.abs(ss);
  let lastOutside = -1;
  for (let k = n - 1; k >= 0; k--) {
    if (Math.abs(y[k] - ss) > band) {
      lastOutside = k;
      break;
    }
  }
  let settlingTime: number | null;
  if (lastOutside === n - 1) settlingTime = null;
  else if (lastOutside < 0) settlingTime = 0;
  else settlingTime = bisect((s) => Math.abs(exact(s).y - ss) - band, t[lastOutside], t[lastOutside + 1]);
  const overshootPercent = Math.max(0, ((peak - ss) / ss) * 100);
  return { riseTime, settlingTime, overshootPercent, peak, peakTime, steadyState: ss };
}
