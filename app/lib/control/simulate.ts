/**
 * Closed-loop simulation of the sampled loop: plant (exact ZOH, delay line) + discrete PID.
 *
 * Per sample k (t = k·h), in this order:
 *   y[k] = plant output (measured just before the new input is applied)
 *   u[k] = controller.step(r[k], y[k] + noise[k])
 *   the plant advances one sample with sat_actuator(u[k] + load[k])
 * The plant starts at rest at y = 0 with zero input, so set points and loads are deviations.
 * A run stops at the first sample whose y or u is not finite: the result then holds the
 * samples before it and `divergedAt` says when (the metrics cover those samples only).
 */
import { ControlInputError, requireFinite, requireNonNegative, requirePositive } from "./errors";
import { runFirstOrderLoop, scheduleFrom } from "./loop-kernel";
import { createPidController, resolvePidCoefficients, type OutputLimits, type PidControllerConfig } from "./pid";
import { createPlantSimulator, discretisePlant, type DiscretePlant, type PlantModel } from "./plant";
import { createRandomSource, type NormalSource } from "./random";

export interface ValueStep {
  /** Seconds from the start. */
  time: number;
  value: number;
}

export interface ClosedLoopOptions {
  plant: PlantModel;
  controller: Omit<PidControllerConfig, "samplePeriod">;
  samplePeriod: number;
  duration: number;
  /** Set-point steps (value holds from `time` on; 0 before the first). Default a unit step at 0. */
  setpoint?: ValueStep[];
  /** Load-disturbance steps added at the plant input. Default none. */
  loadDisturbance?: ValueStep[];
  /** Gaussian measurement noise, repeatable from its seed (default seed 1). */
  noise?: { standardDeviation: number; seed?: number };
  /** Physical actuator range at the plant input; default the controller's output limits. */
  actuatorLimits?: OutputLimits;
  /**
   * Use the sample-by-sample stepper even for first-order plants, which otherwise run
   * through the fused kernel of ./loop-kernel.ts (same numbers, faster). For tests.
   */
  forceStepper?: boolean;
}

export interface LoopMetrics {
  /** 10–90 % of the first set-point change; null without one or if not reached. */
  riseTime: number | null;
  overshootPercent: number | null;
  /** Time after the first set-point change until y stays within 2 % of the change. */
  settlingTime: number | null;
  /** ∫|e| dt, ∫e² dt, ∫t|e| dt over the whole run (t from the start), e = r − y. */
  iae: number;
  ise: number;
  itae: number;
  peakAbsControl: number;
  /** Share of samples with the controller output at a limit (or the actuator clipping). */
  saturatedFraction: number;
  /** Share of samples with the integrator held by anti-windup or its state limits. */
  integratorHeldFraction: number;
}

export interface ClosedLoopResult {
  t: number[];
  r: number[];
  /** Process value without noise. */
  y: number[];
  u: number[];
  metrics: LoopMetrics;
  /** Time (s) of the first sample with a non-finite y or u; null when the run completed. */
  divergedAt: number | null;
}

function checkSteps(field: string, steps: ValueStep[] | undefined): ValueStep[] {
  if (steps === undefined) return [];
  if (!Array.isArray(steps)) throw new ControlInputError(field, "must be an array of {time, value}");
  steps.forEach((s, i) => {
    requireNonNegative(`${field}[${i}].time`, s.time);
    requireFinite(`${field}[${i}].value`, s.value);
  });
  return [...steps].sort((a, b) => a.time - b.time);
}

export function simulateClosedLoop(options: ClosedLoopOptions): ClosedLoopResult {
  const h = requirePositive("samplePeriod", options.samplePeriod);
  const duration = requirePositive("duration", options.duration);
  const samples = Math.floor(duration / h + 1e-9) + 1;
  if (samples > 5_000_000) throw new ControlInputError("duration", "gives more than 5 000 000 samples");
  const setpoint = options.setpoint === undefined ? [{ time: 0, value: 1 }] : checkSteps("setpoint", options.setpoint);
  const load = checkSteps("loadDisturbance", options.loadDisturbance);
  const discrete = discretisePlant(options.plant, h);
  const controllerConfig = { ...options.controller, samplePeriod: h };
  const actuator = options.actuatorLimits ?? options.controller.outputLimits ?? { min: -Infinity, max: Infinity };
  if (!(actuator.min < actuator.max)) throw new ControlInputError("actuatorLimits.max", "must be greater than min");
  const noiseStd = options.noise ? requireNonNegative("noise.standardDeviation", options.noise.standardDeviation) : 0;
  const random = createRandomSource(options.noise?.seed ?? 1);
  if (discrete.order === 1 && !options.forceStepper) {
    return simulateFirstOrder(discrete, controllerConfig, samples, setpoint, load, actuator, noiseStd, random);
  }
  const plant = createPlantSimulator(discrete, 0, samples);
  const controller = createPidController(controllerConfig);

  const t = new Array<number>(samples);
  const r = new Array<number>(samples);
  const y = new Array<number>(samples);
  const u = new Array<number>(samples);
  let spIndex = 0;
  let spValue = 0;
  let loadIndex = 0;
  let loadValue = 0;
  let saturated = 0;
  let held = 0;
  let peakAbsControl = 0;
  let iae = 0;
  let ise = 0;
  let itae = 0;
  let completed = samples;
  // A small tolerance so a step at t = 10 s lands on sample 100 despite rounding of k·h.
  const eps = 1e-9 * h;
  for (let k = 0; k < samples; k++) {
    const time = k * h;
    while (spIndex < setpoint.length && setpoint[spIndex].time <= time + eps) spValue = setpoint[spIndex++].value;
    while (loadIndex < load.length && load[loadIndex].time <= time + eps) loadValue = load[loadIndex++].value;
    const yk = plant.output();
    const measured = noiseStd > 0 ? yk + noiseStd * random.nextNormal() : yk;
    const uk = controller.step(spValue, measured);
    if (!Number.isFinite(yk) || !Number.isFinite(uk)) {
      completed = k;
      break;
    }
    let plantInput = uk + loadValue;
    let clipped = false;
    if (plantInput > actuator.max) {
      plantInput = actuator.max;
      clipped = true;
    } else if (plantInput < actuator.min) {
      plantInput = actuator.min;
      clipped = true;
    }
    plant.advance(plantInput);
    t[k] = time;
    r[k] = spValue;
    y[k] = yk;
    u[k] = uk;
    if (controller.saturatedHigh || controller.saturatedLow || clipped) saturated++;
    if (controller.integratorHeld) held++;
    const absU = Math.abs(uk);
    if (absU > peakAbsControl) peakAbsControl = absU;
    const e = spValue - yk;
    iae += Math.abs(e) * h;
    ise += e * e * h;
    itae += time * Math.abs(e) * h;
  }
  truncate(completed, t, r, y, u);
  const stepMetrics = computeSetpointStepMetrics(t, r, y);
  return {
    t,
    r,
    y,
    u,
    metrics: {
      ...stepMetrics,
      iae,
      ise,
      itae,
      peakAbsControl,
      saturatedFraction: saturated / Math.max(1, completed),
      integratorHeldFraction: held / Math.max(1, completed),
    },
    divergedAt: completed < samples ? completed * h : null,
  };
}

function truncate(length: number, ...series: number[][]): void {
  for (const s of series) s.length = length;
}

function simulateFirstOrder(
  discrete: DiscretePlant,
  controllerConfig: PidControllerConfig,
  samples: number,
  setpoint: ValueStep[],
  load: ValueStep[],
  actuator: OutputLimits,
  noiseStd: number,
  random: NormalSource,
): ClosedLoopResult {
  const t = new Array<number>(samples);
  const r = new Array<number>(samples);
  const y = new Array<number>(samples);
  const u = new Array<number>(samples);
  const totals = runFirstOrderLoop(
    discrete,
    resolvePidCoefficients(controllerConfig).k,
    samples,
    scheduleFrom(setpoint),
    scheduleFrom(load),
    actuator,
    noiseStd > 0 ? { standardDeviation: noiseStd, source: random } : null,
    { t, r, y, u },
  );
  const completed = totals.completed;
  truncate(completed, t, r, y, u);
  return {
    t,
    r,
    y,
    u,
    metrics: {
      ...computeSetpointStepMetrics(t, r, y),
      iae: totals.iae,
      ise: totals.ise,
      itae: totals.itae,
      peakAbsControl: totals.peakAbsControl,
      saturatedFraction: totals.saturated / Math.max(1, completed),
      integratorHeldFraction: totals.held / Math.max(1, completed),
    },
    divergedAt: totals.divergedAt === null ? null : totals.divergedAt * discrete.samplePeriod,
  };
}

/**
 * Rise, overshoot and 2 % settling for the first set-point change (from 0, the initial
 * rest level, or from r[0]), measured until the next change. Crossings are interpolated
 * linearly between samples.
 */
export function computeSetpointStepMetrics(
  t: number[],
  r: number[],
  y: number[],
): Pick<LoopMetrics, "riseTime" | "overshootPercent" | "settlingTime"> {
  const none = { riseTime: null, overshootPercent: null, settlingTime: null };
  const n = t.length;
  if (n === 0) return none;
  let start = 0;
  let before = 0;
  if (r[0] === 0) {
    start = r.findIndex((v) => v !== r[0]);
    if (start < 0) return none;
    before = r[start - 1];
  }
  const target = r[start];
  const change = target - before;
  if (change === 0) return none;
  let end = n;
  for (let k = start + 1; k < n; k++) {
    if (r[k] !== target) {
      end = k;
      break;
    }
  }
  const sign = Math.sign(change);
  const level = (k: number) => (sign * (y[k] - before)) / Math.abs(change);
  const crossing = (fraction: number): number | null => {
    for (let k = start; k < end; k++) {
      if (level(k) >= fraction) {
        if (k === start) return t[k];
        const a = level(k - 1);
        const b = level(k);
        return t[k - 1] + ((fraction - a) / (b - a)) * (t[k] - t[k - 1]);
      }
    }
    return null;
  };
  const t10 = crossing(0.1);
  const t90 = crossing(0.9);
  let peakLevel = -Infinity;
  for (let k = start; k < end; k++) peakLevel = Math.max(peakLevel, level(k));
  const band = 0.02;
  let lastOutside = -1;
  for (let k = end - 1; k >= start; k--) {
    if (Math.abs(level(k) - 1) > band) {
      lastOutside = k;
      break;
    }
  }
  let settlingTime: number | null = null;
  if (lastOutside < 0) settlingTime = 0;
  else if (lastOutside < end - 1) {
    const a = Math.abs(level(lastOutside) - 1) - band;
    const b = Math.abs(level(lastOutside + 1) - 1) - band;
    const tc = t[lastOutside] + (a / (a - b)) * (t[lastOutside + 1] - t[lastOutside]);
    settlingTime = tc - t[start];
  }
  return {
    riseTime: t10 !== null && t90 !== null ? t90 - t10 : null,
    overshootPercent: Math.max(0, (peakLevel - 1) * 100),
    settlingTime,
  };
}
