/**
 * FOPDT identification from a step test.
 *
 * Data: times t (strictly increasing, uneven allowed), controller output u and process value
 * y. u[i] is taken as held from t[i] until t[i+1] (what a sampled controller does). The step
 * is where u first moves more than half-way to its final value; times count from there.
 * y0 is the mean of y before the step (y[0] if none); y∞ the mean of the last 2 % of samples.
 *
 * The least-squares fit simulates the model exactly on the actual time grid with the actual
 * (piecewise-constant) input, so it is exact for such data, and uses analytic sensitivities
 * (∂y/∂θ = −dy/dt because the model starts at rest).
 */
import { levenbergMarquardt } from "ml-levenberg-marquardt";
import { ControlInputError } from "./errors";
import type { FopdtModel } from "./plant";

export interface StepTestData {
  t: ArrayLike<number>;
  u: ArrayLike<number>;
  y: ArrayLike<number>;
}

export type TwoPointMethod = "smith" | "sundaresan-krishnaswamy";

export interface TwoPointResult {
  method: TwoPointMethod;
  model: FopdtModel;
  /** Times (from the step) at which the normalised response crossed the two levels. */
  crossingTimes: [number, number];
}

export interface FopdtFitResult {
  model: FopdtModel;
  fit: { rmse: number; r2: number };
  /** Process value before the step, as fitted. */
  baseline: number;
  iterations: number;
  initialEstimate: FopdtModel;
}

const MIN_SAMPLES = 10;

interface PreparedStep {
  n: number;
  t: Float64Array;
  u: Float64Array;
  y: Float64Array;
  stepIndex: number;
  stepTime: number;
  u0: number;
  y0: number;
  du: number;
  dy: number;
}

function prepare(data: StepTestData): PreparedStep {
  if (!data || typeof data !== "object") throw new ControlInputError("data", "must hold t, u and y arrays");
  for (const key of ["t", "u", "y"] as const) {
    const a = data[key];
    if (!a || typeof a.length !== "number") throw new ControlInputError(key, "must be an array of numbers");
  }
  const n = data.t.length;
  if (data.u.length !== n) throw new ControlInputError("u", `has ${data.u.length} samples but t has ${n}`);
  if (data.y.length !== n) throw new ControlInputError("y", `has ${data.y.length} samples but t has ${n}`);
  if (n < MIN_SAMPLES) throw new ControlInputError("t", `needs at least ${MIN_SAMPLES} samples, got ${n}`);
  const t = Float64Array.from(data.t);
  const u = Float64Array.from(data.u);
  const y = Float64Array.from(data.y);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(t[i])) throw new ControlInputError("t", `sample ${i} is not a finite number`);
    if (!Number.isFinite(u[i])) throw new ControlInputError("u", `sample ${i} is not a finite number`);
    if (!Number.isFinite(y[i])) throw new ControlInputError("y", `sample ${i} is not a finite number`);
    if (i > 0 && !(t[i] > t[i - 1])) throw new ControlInputError("t", `must increase strictly (sample ${i})`);
  }
  const u0 = u[0];
  const du = u[n - 1] - u0;
  let uScale = 0;
  for (let i = 0; i < n; i++) uScale = Math.max(uScale, Math.abs(u[i]));
  if (!(Math.abs(du) > 1e-9 * Math.max(uScale, 1e-300))) {
    throw new ControlInputError("u", "contains no step (the input ends where it started)");
  }
  let stepIndex = -1;
  for (let i = 1; i < n; i++) {
    if (Math.abs(u[i] - u0) > 0.5 * Math.abs(du)) {
      stepIndex = i;
      break;
    }
  }
  if (stepIndex < 0) throw new ControlInputError("u", "contains no step");
  if (n - stepIndex < MIN_SAMPLES) throw new ControlInputError("t", `needs at least ${MIN_SAMPLES} samples after the step`);
  let y0 = 0;
  for (let i = 0; i < stepIndex; i++) y0 += y[i];
  y0 /= stepIndex;
  const tail = Math.max(1, Math.floor(n / 50));
  let yEnd = 0;
  for (let i = n - tail; i < n; i++) yEnd += y[i];
  yEnd /= tail;
  const dy = yEnd - y0;
  let yScale = 0;
  for (let i = 0; i < n; i++) yScale = Math.max(yScale, Math.abs(y[i] - y0));
  if (!(Math.abs(dy) > 1e-9 * Math.max(yScale, 1e-300)) || yScale === 0) {
    throw new ControlInputError("y", "shows no response to the step");
  }
  return { n, t, u, y, stepIndex, stepTime: t[stepIndex], u0, y0, du, dy };
}

/**
 * The measurement noise σ, from the first differences (a smooth response barely changes
 * between samples; white noise adds σ√2 to each difference): median absolute deviation,
 * scaled by 1/0.6745 for a normal distribution.
 */
function estimateNoise(y: Float64Array): number {
  const d = new Float64Array(y.length - 1);
  for (let i = 1; i < y.length; i++) d[i - 1] = y[i] - y[i - 1];
  const median = (a: Float64Array) => {
    const sorted = Float64Array.from(a).sort();
    return sorted[sorted.length >> 1];
  };
  const centre = median(d);
  const deviations = d.map((v) => Math.abs(v - centre));
  return median(deviations) / 0.6745 / Math.SQRT2;
}

/**
 * y smoothed for reading crossing times: a quadratic fitted by least squares to the 2M + 1
 * samples around each one, in their own times (Savitzky & Golay 1964, REFERENCES.md
 * "Identification on noisy data"). M makes the smoothed noise about 1 % of the step
 * (a quadratic's centre value averages noise down by about 1.5/√(2M + 1)), at most a tenth
 * of the record; noise-free data is left as it is.
 */
export function smoothStepResponse(t: Float64Array, y: Float64Array, step: number): Float64Array {
  const n = y.length;
  const sigma = estimateNoise(y);
  const target = 0.01 * Math.abs(step);
  if (!(sigma > target / 3)) return y;
  const width = Math.min(Math.ceil((1.5 * sigma / target) ** 2), Math.floor(n / 10), 801);
  const half = Math.max(1, Math.floor(width / 2));
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const from = Math.max(0, i - half);
    const to = Math.min(n - 1, i + half);
    // Normal equations of y ≈ a + b·s + c·s², s = t − t[i], solved by Cramer's rule.
    let s0 = 0, s1 = 0, s2 = 0, s3 = 0, s4 = 0, r0 = 0, r1 = 0, r2 = 0;
    for (let j = from; j <= to; j++) {
      const x = t[j] - t[i];
      const x2 = x * x;
      s0 += 1; s1 += x; s2 += x2; s3 += x2 * x; s4 += x2 * x2;
      r0 += y[j]; r1 += x * y[j]; r2 += x2 * y[j];
    }
    const det = s0 * (s2 * s4 - s3 * s3) - s1 * (s1 * s4 - s3 * s2) + s2 * (s1 * s3 - s2 * s2);
    out[i] = Math.abs(det) > 1e-300
      ? (r0 * (s2 * s4 - s3 * s3) - s1 * (r1 * s4 - s3 * r2) + s2 * (r1 * s3 - s2 * r2)) / det
      : r0 / s0;
  }
  return out;
}

/**
 * Time after the step at which the normalised response first reaches `level` (linear
 * interpolation), read from the smoothed response so one noise spike cannot set it.
 */
function crossingTimeOf(p: PreparedStep, level: number, smooth: Float64Array): number {
  const sign = Math.sign(p.dy);
  const norm = (i: number) => (sign * (smooth[i] - p.y0)) / Math.abs(p.dy);
  for (let i = p.stepIndex; i < p.n; i++) {
    if (norm(i) >= level) {
      if (i === p.stepIndex) return 0;
      const a = norm(i - 1);
      const b = norm(i);
      const ti = p.t[i - 1] + ((level - a) / (b - a)) * (p.t[i] - p.t[i - 1]);
      return Math.max(0, ti - p.stepTime);
    }
  }
  throw new ControlInputError("y", `never reaches ${(level * 100).toFixed(1)} % of its final change`);
}

export function identifyTwoPoint(data: StepTestData, method: TwoPointMethod): TwoPointResult {
  const p = prepare(data);
  const gain = p.dy / p.du;
  const smooth = smoothStepResponse(p.t, p.y, p.dy);
  const crossingTime = (p: PreparedStep, level: number) => crossingTimeOf(p, level, smooth);
  let tau: number;
  let theta: number;
  let times: [number, number];
  if (method === "smith") {
    const t28 = crossingTime(p, 0.283);
    const t63 = crossingTime(p, 0.632);
    tau = 1.5 * (t63 - t28);
    theta = t63 - tau;
    times = [t28, t63];
  } else if (method === "sundaresan-krishnaswamy") {
    const t35 = crossingTime(p, 0.353);
    const t85 = crossingTime(p, 0.853);
    tau = 0.67 * (t85 - t35);
    theta = 1.3 * t35 - 0.29 * t85;
    times = [t35, t85];
  } else {
    throw new ControlInputError("method", "must be smith or sundaresan-krishnaswamy");
  }
  if (!(tau > 0)) throw new ControlInputError("y", "rises too abruptly to estimate a time constant");
  return {
    method,
    model: { type: "fopdt", gain, timeConstant: tau, deadTime: Math.max(0, theta) },
    crossingTimes: times,
  };
}

/**
 * Exact response of K e^{−θs}/(τs+1) to the held input (deviation from u0), at every t[i],
 * together with the unit-gain response w and ∂w/∂τ (for the analytic Jacobian).
 */
function simulateFopdtOnGrid(
  p: PreparedStep,
  tau: number,
  theta: number,
  w: Float64Array,
  dwdtau: Float64Array,
  vAt: Float64Array,
): void {
  const { n, t, u, u0 } = p;
  // Input u[j] − u0 acts on the model from t[j] + θ; j walks those switching times.
  let j = 0;
  let v = 0;
  let wNow = 0;
  let sNow = 0;
  let now = t[0];
  const inv = 1 / tau;
  const inv2 = inv * inv;
  for (let i = 0; i < n; i++) {
    const target = t[i];
    while (j < n && t[j] + theta <= target) {
      const switchAt = t[j] + theta;
      if (switchAt > now) {
        const dt = switchAt - now;
        const e = Math.exp(-dt * inv);
        sNow = (wNow - v) * e * dt * inv2 + sNow * e;
        wNow = v + (wNow - v) * e;
        now = switchAt;
      }
      v = u[j] - u0;
      j++;
    }
    if (target > now) {
      const dt = target - now;
      const e = Math.exp(-dt * inv);
      sNow = (wNow - v) * e * dt * inv2 + sNow * e;
      wNow = v + (wNow - v) * e;
      now = target;
    }
    w[i] = wNow;
    dwdtau[i] = sNow;
    vAt[i] = v;
  }
}

export interface FitOptions {
  /** Start from this model instead of the Smith two-point estimate. */
  initial?: FopdtModel;
  maxIterations?: number;
}

/**
 * Most samples the least-squares fit works on. ml-levenberg-marquardt costs about 4 µs per
 * sample and iteration, so a long record is thinned to this many of its own samples (every
 * k-th, plus every sample where the input changes, so the held input stays exact); the
 * estimate loses a little precision, the CPU time stays bounded. Fit figures are for the
 * samples used.
 */
export const MAX_FIT_SAMPLES = 1_500;

function thin(p: PreparedStep): PreparedStep {
  if (p.n <= MAX_FIT_SAMPLES) return p;
  const stride = Math.ceil(p.n / MAX_FIT_SAMPLES);
  const keep: number[] = [];
  for (let i = 0; i < p.n; i++) if (i % stride === 0 || i === p.n - 1 || (i > 0 && p.u[i] !== p.u[i - 1])) keep.push(i);
  const pick = (a: Float64Array) => Float64Array.from(keep, (i) => a[i]);
  const stepIndex = keep.indexOf(p.stepIndex);
  return { ...p, n: keep.length, t: pick(p.t), u: pick(p.u), y: pick(p.y), stepIndex };
}

/** Least-squares FOPDT fit (parameters K, τ, θ and the baseline y0), started from a two-point estimate. */
export function fitFopdt(data: StepTestData, options: FitOptions = {}): FopdtFitResult {
  const p = thin(prepare(data));
  let initial: FopdtModel;
  if (options.initial) initial = options.initial;
  else {
    try {
      initial = identifyTwoPoint(data, "smith").model;
    } catch {
      initial = { type: "fopdt", gain: p.dy / p.du, timeConstant: (p.t[p.n - 1] - p.stepTime) / 5, deadTime: 0 };
    }
  }
  const n = p.n;
  const span = p.t[n - 1] - p.t[0];
  const w = new Float64Array(n);
  const dw = new Float64Array(n);
  const vAt = new Float64Array(n);
  let cacheKey = "";
  const model = new Float64Array(n);
  const ensure = (params: number[]) => {
    const key = params.join(",");
    if (key === cacheKey) return;
    const [k, tau, theta, base] = params;
    simulateFopdtOnGrid(p, tau, theta, w, dw, vAt);
    for (let i = 0; i < n; i++) model[i] = base + k * w[i];
    cacheKey = key;
  };
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = i;
  const fn = (params: number[]) => {
    ensure(params);
    return (i: number) => model[i];
  };
  const jac = (params: number[]) => {
    ensure(params);
    const [k, tau] = params;
    return (i: number) => [w[i], k * dw[i], (-k * (vAt[i] - w[i])) / tau, 1];
  };
  const dataScale = Math.abs(p.dy) || 1;
  const tauMin = 1e-6 * span;
  let params = [initial.gain, Math.max(initial.timeConstant, tauMin), Math.max(0, initial.deadTime), p.y0];
  let iterations = 0;
  let previousError = Infinity;
  const maxIterations = options.maxIterations ?? 80;
  // Short rounds let us stop on a stalled error; the library itself only stops on a threshold.
  while (iterations < maxIterations) {
    const result = levenbergMarquardt({ x, y: p.y }, fn, {
      initialValues: params,
      jacobianFunction: jac,
      maxIterations: 10,
      damping: 1e-3,
      errorTolerance: 0,
      minValues: [-Infinity, tauMin, 0, -Infinity],
      maxValues: [Infinity, 100 * span, span, Infinity],
    });
    iterations += result.iterations;
    params = result.parameterValues;
    const error = result.parameterError;
    const stalled = previousError - error <= 1e-12 * Math.max(previousError, 1e-300) + 1e-30 * dataScale;
    previousError = Math.min(previousError, error);
    if (stalled || result.iterations === 0) break;
  }
  ensure(params);
  let sse = 0;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += p.y[i];
  mean /= n;
  let sst = 0;
  for (let i = 0; i < n; i++) {
    const r = p.y[i] - model[i];
    sse += r * r;
    sst += (p.y[i] - mean) * (p.y[i] - mean);
  }
  return {
    model: { type: "fopdt", gain: params[0], timeConstant: params[1], deadTime: params[2] },
    fit: { rmse: Math.sqrt(sse / n), r2: sst > 0 ? 1 - sse / sst : 1 },
    baseline: params[3],
    iterations,
    initialEstimate: initial,
  };
}
