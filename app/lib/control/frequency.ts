/**
 * Frequency response and stability margins of the loop L = C·P.
 *
 * Continuous loop: C(s) = kp + ki/s + kd·s/(Tf s + 1), P(s) = num/den·e^{−θs}.
 * Sampled loop (a sample period is given): exact discrete evaluation at z = e^{jωh} of the
 * controller as implemented in pid.ts, C(z) = kp + ki·h/(z − 1) + bd(1 − z⁻¹)/(1 − ad z⁻¹),
 * times the ZOH-discretised plant (plant.ts), which already contains the hold's delay and
 * the fractional dead time. Frequencies run up to the Nyquist frequency π/h.
 *
 * Crossovers are found on a log grid (made denser where dead time turns the phase quickly)
 * and refined by bisection. With several crossovers: the gain margin is the smallest one
 * (1/largest |L| where L crosses the negative real axis), the phase margin the smallest one
 * over all gain crossovers, and the delay margin the smallest PMᵢ/ωcᵢ (0 when some PMᵢ ≤ 0).
 * All crossovers are listed too. A conditionally stable loop can thus report GM < 1, which
 * is why stability is decided from the closed-loop poles (./stability.ts), never from the
 * margins; Ms is given only for a stable loop (for an unstable one it means nothing).
 */
import { ControlInputError, requirePositive } from "./errors";
import { toParallelGains, type PidGains } from "./forms";
import { resolveDerivativeFilterTime, type DerivativeFilter } from "./pid";
import {
  discretisePlant,
  evaluateDiscretePlantFrequency,
  evaluatePlantFrequency,
  toTransferFunction,
  type PlantModel,
} from "./plant";
import { findPolynomialRoots, type Complex } from "./polynomial";
import { assessClosedLoopStability } from "./stability";

export interface LoopSpec {
  plant: PlantModel;
  /** Default: proportional gain 1 (the plant alone), as used for the ultimate point. */
  controller?: { gains: PidGains; derivativeFilter?: DerivativeFilter };
  /** Evaluate the sampled loop at this period (s). */
  samplePeriod?: number;
}

export interface FrequencyPoint {
  omega: number;
  re: number;
  im: number;
  magnitude: number;
  /** Unwrapped along the requested frequencies. */
  phaseDegrees: number;
}

export interface Crossover {
  omega: number;
  /** Gain margin at a phase crossover, phase margin (deg) at a gain crossover. */
  margin: number;
}

export interface StabilityMargins {
  /** From the closed-loop poles (./stability.ts). */
  stable: boolean;
  gainMargin: number | null;
  phaseCrossoverFrequency: number | null;
  phaseMargin: number | null;
  gainCrossoverFrequency: number | null;
  /** Seconds of extra loop delay the loop tolerates; null without a gain crossover. */
  delayMargin: number | null;
  /** max |1/(1 + L)|; null when the loop is unstable. */
  peakSensitivity: number | null;
  peakSensitivityFrequency: number | null;
  phaseCrossovers: Crossover[];
  gainCrossovers: Crossover[];
  /** Frequency range searched (rad/s). */
  omegaRange: [number, number];
}

export interface UltimatePoint {
  ultimateGain: number;
  ultimatePeriod: number;
  ultimateFrequency: number;
}

interface LoopEvaluator {
  evaluate(omega: number): Complex;
  omegaMin: number;
  omegaMax: number;
  /** Largest spacing in ω that keeps the dead-time phase step small. */
  maxLinearStep: number;
  sampled: boolean;
}

function createLoopEvaluator(loop: LoopSpec): LoopEvaluator {
  const tf = toTransferFunction(loop.plant);
  const gains = loop.controller ? toParallelGains(loop.controller.gains) : { kp: 1, ki: 0, kd: 0 };
  const tf0 = loop.controller ? resolveDerivativeFilterTime(gains, loop.controller.derivativeFilter) : 0;
  // Characteristic frequencies bound the interesting range.
  const corners: number[] = [];
  for (const r of [...findPolynomialRoots(tf.denominator), ...findPolynomialRoots(tf.numerator)]) {
    const m = Math.hypot(r.re, r.im);
    if (m > 1e-12) corners.push(m);
  }
  if (tf.deadTime > 0) corners.push(1 / tf.deadTime);
  if (gains.ki !== 0 && gains.kp !== 0) corners.push(Math.abs(gains.ki / gains.kp));
  if (gains.kd !== 0 && gains.kp !== 0) corners.push(Math.abs(gains.kp / gains.kd));
  if (tf0 > 0) corners.push(1 / tf0);
  if (corners.length === 0) corners.push(1);
  const lo = Math.min(...corners);
  const hi = Math.max(...corners);

  if (loop.samplePeriod === undefined) {
    const evaluate = (omega: number): Complex => {
      const p = evaluatePlantFrequency(tf, omega);
      // C(jω) = kp + ki/(jω) + kd·jω/(1 + jωTf)
      const dDen = 1 + omega * omega * tf0 * tf0;
      const cRe = gains.kp + (gains.kd * omega * omega * tf0) / dDen;
      const cIm = -gains.ki / omega + (gains.kd * omega) / dDen;
      return { re: cRe * p.re - cIm * p.im, im: cRe * p.im + cIm * p.re };
    };
    return {
      evaluate,
      omegaMin: lo * 1e-4,
      omegaMax: hi * 1e3,
      maxLinearStep: linearStep(tf.deadTime, lo * 1e-4, hi * 1e3),
      sampled: false,
    };
  }
  const h = requirePositive("samplePeriod", loop.samplePeriod);
  const discrete = discretisePlant(loop.plant, h);
  const ad = tf0 / (tf0 + h);
  const bd = gains.kd / (tf0 + h);
  const evaluate = (omega: number): Complex => {
    const p = evaluateDiscretePlantFrequency(discrete, omega);
    const zr = Math.cos(omega * h);
    const zi = Math.sin(omega * h);
    // ki·h/(z − 1)
    const den1r = zr - 1;
    const den1i = zi;
    const d1 = den1r * den1r + den1i * den1i;
    let cRe = gains.kp + (gains.ki * h * den1r) / d1;
    let cIm = (-gains.ki * h * den1i) / d1;
    // bd(1 − z⁻¹)/(1 − ad z⁻¹) = bd(z − 1)/(z − ad)
    const den2r = zr - ad;
    const den2i = zi;
    const d2 = den2r * den2r + den2i * den2i;
    cRe += (bd * ((zr - 1) * den2r + zi * den2i)) / d2;
    cIm += (bd * (zi * den2r - (zr - 1) * den2i)) / d2;
    return { re: cRe * p.re - cIm * p.im, im: cRe * p.im + cIm * p.re };
  };
  const nyquist = Math.PI / h;
  const delay = discrete.delaySamples * h + h;
  return {
    evaluate,
    omegaMin: Math.min(lo, nyquist) * 1e-4,
    omegaMax: nyquist,
    maxLinearStep: linearStep(delay, Math.min(lo, nyquist) * 1e-4, nyquist),
    sampled: true,
  };
}

/**
 * Dead time θ turns the phase by θ·Δω per grid step; keeping that under 0.2 rad stops the
 * search from stepping over a crossing. The step is widened when that would need more than
 * 20 000 points: such crossings lie where |L| has long decayed, far from the margins.
 */
function linearStep(delay: number, omegaMin: number, omegaMax: number): number {
  if (!(delay > 0)) return Infinity;
  return Math.max(0.2 / delay, (omegaMax - omegaMin) / 20_000);
}

/** L at the given frequencies (rad/s), phase unwrapped in the order given. */
export function computeFrequencyResponse(loop: LoopSpec, omegas: readonly number[]): FrequencyPoint[] {
  const evaluator = createLoopEvaluator(loop);
  const out: FrequencyPoint[] = [];
  let previous: number | null = null;
  for (let i = 0; i < omegas.length; i++) {
    const omega = omegas[i];
    if (!(omega > 0) || !Number.isFinite(omega)) throw new ControlInputError(`omegas[${i}]`, "must be a positive frequency");
    const l = evaluator.evaluate(omega);
    let phase = (Math.atan2(l.im, l.re) * 180) / Math.PI;
    if (previous !== null) phase -= 360 * Math.round((phase - previous) / 360);
    previous = phase;
    out.push({ omega, re: l.re, im: l.im, magnitude: Math.hypot(l.re, l.im), phaseDegrees: phase });
  }
  return out;
}

function buildGrid(evaluator: LoopEvaluator): number[] {
  const { omegaMin, omegaMax, maxLinearStep } = evaluator;
  const perDecade = 200;
  const ratio = Math.pow(10, 1 / perDecade);
  const grid: number[] = [];
  let w = omegaMin;
  while (w < omegaMax && grid.length < 200_000) {
    grid.push(w);
    const next = w * ratio;
    w = next - w > maxLinearStep ? w + maxLinearStep : next;
  }
  grid.push(omegaMax);
  return grid;
}

function bisectFrequency(f: (w: number) => number, lo: number, hi: number): number {
  let flo = f(lo);
  for (let i = 0; i < 100; i++) {
    const mid = Math.sqrt(lo * hi);
    const fm = f(mid);
    if (fm === 0) return mid;
    if (Math.sign(fm) === Math.sign(flo)) {
      lo = mid;
      flo = fm;
    } else hi = mid;
    if (hi / lo - 1 < 1e-14) break;
  }
  return Math.sqrt(lo * hi);
}

export function computeMargins(loop: LoopSpec): StabilityMargins {
  // The verdict first: it refuses what it cannot judge before the longer frequency sweep.
  const { stable } = assessClosedLoopStability(loop);
  const margins = sweepMargins(loop);
  return {
    ...margins,
    stable,
    peakSensitivity: stable ? margins.peakSensitivity : null,
    peakSensitivityFrequency: stable ? margins.peakSensitivityFrequency : null,
  };
}

type SweptMargins = Omit<StabilityMargins, "stable" | "peakSensitivity" | "peakSensitivityFrequency"> & {
  peakSensitivity: number;
  peakSensitivityFrequency: number;
};

function sweepMargins(loop: LoopSpec): SweptMargins {
  const evaluator = createLoopEvaluator(loop);
  const grid = buildGrid(evaluator);
  const values = grid.map((w) => evaluator.evaluate(w));
  const phaseCrossovers: Crossover[] = [];
  const gainCrossovers: Crossover[] = [];
  const imag = (w: number) => evaluator.evaluate(w).im;
  const logMagnitude = (w: number) => {
    const l = evaluator.evaluate(w);
    return Math.log(Math.hypot(l.re, l.im));
  };
  for (let i = 1; i < grid.length; i++) {
    const a = values[i - 1];
    const b = values[i];
    if (Math.sign(a.im) !== Math.sign(b.im) && (a.re < 0 || b.re < 0)) {
      const w = b.im === 0 ? grid[i] : bisectFrequency(imag, grid[i - 1], grid[i]);
      const l = evaluator.evaluate(w);
      if (l.re < 0) phaseCrossovers.push({ omega: w, margin: 1 / Math.hypot(l.re, l.im) });
    }
    const ma = Math.hypot(a.re, a.im) - 1;
    const mb = Math.hypot(b.re, b.im) - 1;
    if (Math.sign(ma) !== Math.sign(mb) && ma !== 0) {
      const w = mb === 0 ? grid[i] : bisectFrequency(logMagnitude, grid[i - 1], grid[i]);
      const l = evaluator.evaluate(w);
      let pm = 180 + (Math.atan2(l.im, l.re) * 180) / Math.PI;
      if (pm > 180) pm -= 360;
      gainCrossovers.push({ omega: w, margin: pm });
    }
  }
  // The sampled loop is real at the Nyquist frequency; a negative value there is a crossing.
  const last = values[values.length - 1];
  if (evaluator.sampled && last.re < 0 && !phaseCrossovers.some((c) => c.omega === grid[grid.length - 1])) {
    phaseCrossovers.push({ omega: grid[grid.length - 1], margin: 1 / Math.hypot(last.re, last.im) });
  }

  let gainMargin: number | null = null;
  let phaseCrossoverFrequency: number | null = null;
  for (const c of phaseCrossovers) {
    if (gainMargin === null || c.margin < gainMargin) {
      gainMargin = c.margin;
      phaseCrossoverFrequency = c.omega;
    }
  }
  let phaseMargin: number | null = null;
  let gainCrossoverFrequency: number | null = null;
  let delayMargin: number | null = null;
  for (const c of gainCrossovers) {
    if (phaseMargin === null || c.margin < phaseMargin) {
      phaseMargin = c.margin;
      gainCrossoverFrequency = c.omega;
    }
    const dm = c.margin <= 0 ? 0 : (c.margin * Math.PI) / 180 / c.omega;
    delayMargin = delayMargin === null ? dm : Math.min(delayMargin, dm);
  }

  // Peak sensitivity: grid maximum, refined by golden section, and checked at the crossovers.
  const sensitivity = (w: number) => {
    const l = evaluator.evaluate(w);
    return 1 / Math.hypot(1 + l.re, l.im);
  };
  let iMax = 0;
  let sMax = -Infinity;
  for (let i = 0; i < grid.length; i++) {
    const s = 1 / Math.hypot(1 + values[i].re, values[i].im);
    if (s > sMax) {
      sMax = s;
      iMax = i;
    }
  }
  let peakSensitivityFrequency = grid[iMax];
  if (iMax > 0 && iMax < grid.length - 1) {
    let a = Math.log(grid[iMax - 1]);
    let b = Math.log(grid[iMax + 1]);
    const g = (Math.sqrt(5) - 1) / 2;
    for (let i = 0; i < 80; i++) {
      const x1 = b - g * (b - a);
      const x2 = a + g * (b - a);
      if (sensitivity(Math.exp(x1)) > sensitivity(Math.exp(x2))) b = x2;
      else a = x1;
    }
    const w = Math.exp(0.5 * (a + b));
    const s = sensitivity(w);
    if (s > sMax) {
      sMax = s;
      peakSensitivityFrequency = w;
    }
  }
  for (const c of [...phaseCrossovers, ...gainCrossovers]) {
    const s = sensitivity(c.omega);
    if (s > sMax) {
      sMax = s;
      peakSensitivityFrequency = c.omega;
    }
  }
  return {
    gainMargin,
    phaseCrossoverFrequency,
    phaseMargin,
    gainCrossoverFrequency,
    delayMargin,
    peakSensitivity: sMax,
    peakSensitivityFrequency,
    phaseCrossovers,
    gainCrossovers,
    omegaRange: [grid[0], grid[grid.length - 1]],
  };
}

/**
 * Ultimate gain and period under proportional control: Ku is the gain margin of the plant
 * alone, ωu its phase-crossover frequency, Pu = 2π/ωu. Null when the phase never reaches
 * −180°.
 */
export function computeUltimatePoint(plant: PlantModel, samplePeriod?: number): UltimatePoint | null {
  const margins = sweepMargins({ plant, samplePeriod });
  if (margins.gainMargin === null || margins.phaseCrossoverFrequency === null) return null;
  return {
    ultimateGain: margins.gainMargin,
    ultimateFrequency: margins.phaseCrossoverFrequency,
    ultimatePeriod: (2 * Math.PI) / margins.phaseCrossoverFrequency,
  };
}
