/**
 * The closed loop of a first-order plant (FOPDT, IPDT) and the PID controller fused into
 * one loop with every state in a local variable. It does exactly what `createPidController`
 * + `createPlantSimulator` do sample by sample (same update order, same coefficients from
 * `resolvePidCoefficients`), but without a call or an object read per sample, which is what
 * lets a long simulation run at the speed of compiled code. `simulate.test.ts` checks that
 * both paths agree (a property test over random plants, gains, limits and schedules).
 *
 * The loop stops at the first sample whose y or u is not finite (a diverging loop);
 * `divergedAt` is that sample's number, and the outputs hold only the samples before it.
 */
import type { OutputLimits } from "./pid";
import type { DiscretePlant } from "./plant";
import type { NormalSource } from "./random";

export interface KernelSchedule {
  /** Sorted times (s) and values: the value holds from its time on (0 before the first). */
  times: Float64Array;
  values: Float64Array;
}

export interface KernelOutputs {
  t?: number[] | Float64Array;
  r?: number[] | Float64Array;
  y?: number[] | Float64Array;
  u?: number[] | Float64Array;
}

export interface KernelTotals {
  iae: number;
  ise: number;
  itae: number;
  peakAbsControl: number;
  saturated: number;
  held: number;
  lastY: number;
  sumY: number;
  /** Samples run: `samples`, or the first non-finite sample when the loop diverged. */
  completed: number;
  /** The first sample with a non-finite y or u; null when the run completed. */
  divergedAt: number | null;
}

// Sample numbers as doubles: a change far beyond the run (2.2e6 s at h = 1 ms) is a sample
// number past 2³¹, which an Int32Array would wrap to a negative number, i.e. to t = 0.
function startSamples(times: Float64Array, h: number): Float64Array {
  const out = new Float64Array(times.length);
  for (let i = 0; i < times.length; i++) {
    let k = Math.max(0, Math.ceil(times[i] / h - 1e-9));
    // Guard the rounding of the division against the stepper's k·h ≤ time + 1e-9·h test.
    while (k > 0 && times[i] <= (k - 1) * h + 1e-9 * h) k--;
    while (!(times[i] <= k * h + 1e-9 * h)) k++;
    out[i] = k;
  }
  return out;
}

export function scheduleFrom(steps: readonly { time: number; value: number }[]): KernelSchedule {
  return { times: Float64Array.from(steps, (s) => s.time), values: Float64Array.from(steps, (s) => s.value) };
}

/**
 * Run `samples` samples. `coefficients` is the slot array of `resolvePidCoefficients`; the
 * plant must be of order 1. Outputs are written where arrays are given.
 */
export function runFirstOrderLoop(
  plant: DiscretePlant,
  coefficients: Float64Array,
  samples: number,
  setpoint: KernelSchedule,
  load: KernelSchedule,
  actuator: OutputLimits,
  noise: { standardDeviation: number; source: NormalSource } | null,
  out: KernelOutputs,
): KernelTotals {
  const h = plant.samplePeriod;
  const phi = plant.phi[0];
  const gEarly = plant.gammaEarly[0];
  const gLate = plant.gammaLate[0];
  const c = plant.c[0];
  const dd = plant.d;
  // A delay longer than the run only ever reads the line's initial zeros, so the line is
  // never made longer than the run (θ/h can be 10⁹; the run's length is bounded).
  const m = Math.min(plant.delaySamples, samples);
  const length = m + 2;
  const history = new Float64Array(length);
  const kp = coefficients[0];
  const ki = coefficients[1];
  const kih = coefficients[2];
  const b = coefficients[3];
  const ad = coefficients[4];
  const bd = coefficients[5];
  const uMin = coefficients[6];
  const uMax = coefficients[7];
  const track = coefficients[8];
  const iMin = coefficients[9];
  const iMax = coefficients[10];
  const clamp = coefficients[11] === 1;
  const aMin = actuator.min;
  const aMax = actuator.max;
  const noiseStd = noise ? noise.standardDeviation : 0;
  const { t: outT, r: outR, y: outY, u: outU } = out;
  // Each change takes effect at the first sample k with k·h ≥ time (within 1e-9·h, the
  // stepper's rule); turning times into sample numbers once keeps the loop to one compare.
  const spStart = startSamples(setpoint.times, h);
  const spValues = setpoint.values;
  const loadStart = startSamples(load.times, h);
  const loadValues = load.values;
  const spCount = spStart.length;
  const loadCount = loadStart.length;

  let x = 0;
  let head = 0;
  let integral = 0;
  let derivative = 0;
  let yPrev = 0;
  let first = true;
  let spIndex = 0;
  let spValue = 0;
  let loadIndex = 0;
  let loadValue = 0;
  let iae = 0;
  let ise = 0;
  let itae = 0;
  let peak = 0;
  let saturated = 0;
  let held = 0;
  let yk = 0;
  let sumY = 0;
  let divergedAt: number | null = null;

  // Run in segments between schedule changes so the inner loop has no schedule checks.
  let k = 0;
  run: while (k < samples) {
    while (spIndex < spCount && spStart[spIndex] <= k) spValue = spValues[spIndex++];
    while (loadIndex < loadCount && loadStart[loadIndex] <= k) loadValue = loadValues[loadIndex++];
    let end = samples;
    if (spIndex < spCount && spStart[spIndex] < end) end = spStart[spIndex];
    if (loadIndex < loadCount && loadStart[loadIndex] < end) end = loadStart[loadIndex];
    for (; k < end; k++) {
      const time = k * h;

      // Plant output: history[head − m − 1] holds u[k−m−1].
      let idx = head - m - 1;
      if (idx < 0) idx += length;
      const yNow = c * x + dd * history[idx];
      const measured = noiseStd > 0 ? yNow + noiseStd * noise!.source.nextNormal() : yNow;

      // Controller, in the order documented in ./pid.ts.
      if (first) {
        yPrev = measured;
        first = false;
      }
      const d = ad * derivative - bd * (measured - yPrev);
      const p = kp * (b * spValue - measured);
      const v = p + integral + d;
      const high = v > uMax;
      const low = v < uMin;
      const u = high ? uMax : low ? uMin : v;
      // (a + b)·0 is 0 only when both are finite: one multiply finds a diverged loop.
      if ((yNow + u) * 0 !== 0) {
        divergedAt = k;
        break run;
      }
      yk = yNow;
      sumY += yk;
      const e = spValue - measured;
      const push = ki * e;
      let isHeld = clamp && ((high && push > 0) || (low && push < 0));
      let next = integral + (isHeld ? 0 : kih * e) + track * (u - v);
      // The widened bound contains [iMin, iMax], so inside that range nothing is to do.
      if (next > iMax || next < iMin) {
        const pd = p + d;
        const hi = pd < 0 ? iMax - pd : iMax;
        const lo = pd > 0 ? iMin - pd : iMin;
        if (next > hi) {
          next = hi;
          isHeld = true;
        } else if (next < lo) {
          next = lo;
          isHeld = true;
        }
      }
      integral = next;
      derivative = d;
      yPrev = measured;

      // Actuator and plant.
      let input = u + loadValue;
      let clipped = false;
      if (input > aMax) {
        input = aMax;
        clipped = true;
      } else if (input < aMin) {
        input = aMin;
        clipped = true;
      }
      history[head] = input;
      let late = head - m;
      if (late < 0) late += length;
      const early = late === 0 ? length - 1 : late - 1;
      x = phi * x + gEarly * history[early] + gLate * history[late];
      head = head + 1 === length ? 0 : head + 1;

      if (outT) outT[k] = time;
      if (outR) outR[k] = spValue;
      if (outY) outY[k] = yk;
      if (outU) outU[k] = u;
      if (high || low || clipped) saturated++;
      if (isHeld) held++;
      const absU = u < 0 ? -u : u;
      if (absU > peak) peak = absU;
      const err = spValue - yk;
      const absErr = err < 0 ? -err : err;
      iae += absErr * h;
      ise += err * err * h;
      itae += time * absErr * h;
    }
  }
  return { iae, ise, itae, peakAbsControl: peak, saturated, held, lastY: yk, sumY, completed: k, divergedAt };
}
