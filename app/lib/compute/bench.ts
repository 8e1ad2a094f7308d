// The tuning bench's computation: every tuning proposal for a model, scored on the sampled
// loop (margins at the sample period) and on a simulated set-point step followed by a load
// step. Pure and synchronous, so the page runs it in the browser as the engineer types.
import {
  ControlInputError,
  computeMargins,
  computeSetpointStepMetrics,
  createRandomSource,
  proposeAllTunings,
  simulateClosedLoop,
  toStandardGains,
  standardToParallel,
  type AntiWindupMode,
  type ControllerType,
  type FopdtModel,
  type ParallelGains,
  type PidGains,
  type StandardGains,
  type StepTestData,
  type TuningRule,
} from "~/lib/control";
import { answerIdentify } from "./run";

export const RULE_LABELS: Record<TuningRule, string> = {
  "ziegler-nichols": "Ziegler–Nichols cycle",
  "ziegler-nichols-step": "Ziegler–Nichols step",
  "cohen-coon": "Cohen–Coon",
  simc: "SIMC",
  imc: "IMC (lambda)",
  amigo: "AMIGO",
};

/** Limits a proposal must stay inside not to be flagged (DESIGN: Ms above 2 or PM under 30° is risky). */
export const RISK_LIMITS = { peakSensitivity: 2, phaseMarginDegrees: 30 } as const;

/** Most samples one simulated run may take; keeps a keystroke's work bounded. */
export const MAX_BENCH_SAMPLES = 100_000;

export interface BenchSettings {
  controllerKinds: readonly ControllerType[];
  /** SIMC τc (s); undefined = the rule's default (θ). */
  simcTimeConstant?: number;
  /** IMC λ (s); undefined = the rule's default, max(θ, τ/4). */
  imcLambda?: number;
  samplePeriod: number;
  /** Absolute controller-output limits; null = unlimited. */
  outputLimits: { min: number; max: number } | null;
  antiWindup: AntiWindupMode;
  /** Derivative filter N (Tf = Td/N). */
  filterN: number;
  /** Set-point change at t = 0, in process-value units. */
  setpointChange: number;
  /** Load step at the plant input, in controller-output units. */
  loadStep: number;
  /** Where the loop rests before the test: controller output u0 and process value y0. */
  operatingPoint: { output: number; value: number };
}

export interface BenchScenario {
  loadTime: number;
  duration: number;
  samples: number;
}

export type RiskLevel = "ok" | "risky" | "unstable";

export interface RiskVerdict {
  level: RiskLevel;
  reasons: string[];
}

export interface LoopScore {
  /** From the closed-loop poles of the sampled loop, not from the margins. */
  stable: boolean;
  /** Time (s) at which the simulated response left the finite numbers (or the bench's bound); null if it did not. */
  divergedAt: number | null;
  gainMargin: number | null;
  phaseMargin: number | null;
  /** Peak sensitivity Ms; null for an unstable loop (it means nothing there). */
  peakSensitivity: number | null;
  delayMargin: number | null;
  overshootPercent: number | null;
  riseTime: number | null;
  /** 2 % settling after the set-point change; null when it does not settle before the load step. */
  settlingTime: number | null;
  /** ∫|r − y| dt over both steps. */
  iae: number;
  /** Share (0–1) of samples with the output at a limit. */
  saturatedFraction: number;
  risk: RiskVerdict;
}

export interface ProposalRow extends LoopScore {
  id: string;
  rule: TuningRule;
  ruleLabel: string;
  kind: ControllerType;
  standard: StandardGains;
  parallel: ParallelGains;
}

export interface LoopResponse {
  score: LoopScore;
  scenario: BenchScenario;
  /** Absolute values (operating point added back). */
  t: number[];
  r: number[];
  y: number[];
  u: number[];
}

/** The smallest of 1, 2, 5 × 10^k that is ≥ x. */
export function niceCeil(x: number): number {
  if (!(x > 0) || !Number.isFinite(x)) return 1;
  const p = 10 ** Math.floor(Math.log10(x));
  for (const m of [1, 2, 5, 10]) if (m * p >= x * (1 - 1e-12)) return m * p;
  return 10 * p;
}

/** The largest of 1, 2, 5 × 10^k that is ≤ x. */
export function niceFloor(x: number): number {
  if (!(x > 0) || !Number.isFinite(x)) return 1;
  const p = 10 ** Math.floor(Math.log10(x));
  for (const m of [5, 2, 1]) if (m * p <= x * (1 + 1e-12)) return m * p;
  return p;
}

/** Rounds to `digits` significant digits (the number, not a string). */
export function roundSignificant(x: number, digits = 2): number {
  if (x === 0 || !Number.isFinite(x)) return x;
  return Number(x.toPrecision(digits));
}

/**
 * A sample period fast enough for the model: a twentieth of the lag or a fifth of the dead
 * time, whichever is shorter, rounded down to 1-2-5.
 */
export function suggestSamplePeriod(model: FopdtModel): number {
  const byLag = model.timeConstant / 20;
  const byDelay = model.deadTime > 0 ? model.deadTime / 5 : byLag;
  return niceFloor(Math.min(byLag, byDelay));
}

/**
 * Set point at t = 0, load step once the set-point response has had four open-loop time
 * scales (θ + τ) to settle, then as long again for the load response.
 */
export function planScenario(model: FopdtModel, samplePeriod: number): BenchScenario {
  const loadTime = niceCeil(4 * (model.deadTime + model.timeConstant));
  const duration = 2 * loadTime;
  const samples = Math.floor(duration / samplePeriod + 1e-9) + 1;
  if (samples > MAX_BENCH_SAMPLES) {
    throw new ControlInputError(
      "samplePeriod",
      `is too short for this model: ${duration} s of response would take ${samples.toLocaleString("en")} samples; at most ${MAX_BENCH_SAMPLES.toLocaleString("en")}`,
    );
  }
  return { loadTime, duration, samples };
}

/** Default settings for a model, from the step test when there is one. */
export function suggestSettings(model: FopdtModel, test?: StepTestData): BenchSettings {
  let output = 0;
  let value = 0;
  let setpointChange = 1;
  let outputLimits: { min: number; max: number };
  if (test && test.t.length > 1) {
    const n = test.u.length;
    const u0 = test.u[0];
    const du = test.u[n - 1] - u0;
    let stepIndex = 1;
    while (stepIndex < n - 1 && Math.abs(test.u[stepIndex] - u0) <= 0.5 * Math.abs(du)) stepIndex++;
    let y0 = 0;
    for (let i = 0; i < stepIndex; i++) y0 += test.y[i];
    output = u0;
    value = y0 / stepIndex;
    setpointChange = Math.abs(roundSignificant(model.gain * du, 2)) || 1;
    let uMin = Infinity;
    let uMax = -Infinity;
    for (let i = 0; i < n; i++) {
      uMin = Math.min(uMin, test.u[i]);
      uMax = Math.max(uMax, test.u[i]);
    }
    // Most outputs are a percentage; otherwise allow ten test steps either way.
    outputLimits = uMin >= 0 && uMax <= 100 ? { min: 0, max: 100 } : { min: u0 - 10 * Math.abs(du), max: u0 + 10 * Math.abs(du) };
  } else {
    const span = roundSignificant(10 * Math.abs(setpointChange / model.gain), 2);
    outputLimits = { min: -span, max: span };
  }
  return {
    controllerKinds: ["P", "PI", "PID"],
    samplePeriod: suggestSamplePeriod(model),
    outputLimits,
    antiWindup: "clamp",
    filterN: 10,
    setpointChange,
    loadStep: -roundSignificant(setpointChange / model.gain / 2, 2),
    operatingPoint: { output, value },
  };
}

/**
 * "ok" (shown as Sound) only for a loop that is stable by its closed-loop poles, did not
 * diverge in simulation and keeps Ms and PM inside RISK_LIMITS. GM < 1 alone proves nothing
 * (a conditionally stable loop has it), so it is not read as instability.
 */
export function judgeRisk(
  margins: { stable: boolean; phaseMargin: number | null; peakSensitivity: number | null },
  diverged = false,
): RiskVerdict {
  if (!margins.stable || diverged) {
    return { level: "unstable", reasons: [diverged ? "the simulated response diverged" : "the loop is unstable"] };
  }
  const reasons: string[] = [];
  if (!(margins.peakSensitivity !== null && margins.peakSensitivity <= RISK_LIMITS.peakSensitivity)) reasons.push(`Ms above ${RISK_LIMITS.peakSensitivity}`);
  if (margins.phaseMargin !== null && margins.phaseMargin < RISK_LIMITS.phaseMarginDegrees) {
    reasons.push(`phase margin under ${RISK_LIMITS.phaseMarginDegrees}°`);
  }
  return { level: reasons.length ? "risky" : "ok", reasons };
}

function deviationLimits(settings: BenchSettings) {
  if (!settings.outputLimits) return undefined;
  const { min, max } = settings.outputLimits;
  if (!(min < max)) throw new ControlInputError("outputLimits.max", "must be above the minimum");
  const u0 = settings.operatingPoint.output;
  if (!(u0 >= min && u0 <= max)) {
    throw new ControlInputError("outputLimits", `must contain the operating output ${roundSignificant(u0, 4)}, where the loop starts`);
  }
  return { min: min - u0, max: max - u0 };
}

function runLoop(model: FopdtModel, gains: PidGains, settings: BenchSettings) {
  const h = settings.samplePeriod;
  const scenario = planScenario(model, h);
  const controller = {
    gains,
    derivativeFilter: { n: settings.filterN },
    outputLimits: deviationLimits(settings),
    antiWindup: settings.antiWindup,
  };
  const margins = computeMargins({ plant: model, controller: { gains, derivativeFilter: controller.derivativeFilter }, samplePeriod: h });
  const result = simulateClosedLoop({
    plant: model,
    controller,
    samplePeriod: h,
    duration: scenario.duration,
    setpoint: [{ time: 0, value: settings.setpointChange }],
    loadDisturbance: settings.loadStep !== 0 ? [{ time: scenario.loadTime, value: settings.loadStep }] : [],
  });
  // Step figures from the set-point window only: the load step must not count as "not settled".
  const loadIndex = Math.min(result.t.length, Math.round(scenario.loadTime / h));
  const step = computeSetpointStepMetrics(result.t.slice(0, loadIndex), result.r.slice(0, loadIndex), result.y.slice(0, loadIndex));
  // Past a million times the test's own size the response has diverged for any practical
  // purpose, even before it leaves the finite numbers.
  const bound = 1e6 * Math.max(Math.abs(settings.setpointChange), Math.abs(settings.loadStep * model.gain), 1e-12);
  const beyond = result.y.findIndex((v) => Math.abs(v) > bound);
  const divergedAt = beyond >= 0 ? result.t[beyond] : result.divergedAt;
  const diverged = divergedAt !== null;
  const score: LoopScore = {
    stable: margins.stable,
    divergedAt,
    gainMargin: margins.gainMargin,
    phaseMargin: margins.phaseMargin,
    peakSensitivity: margins.peakSensitivity,
    delayMargin: margins.delayMargin,
    overshootPercent: diverged ? null : step.overshootPercent,
    riseTime: diverged ? null : step.riseTime,
    settlingTime: diverged ? null : step.settlingTime,
    iae: diverged ? Infinity : result.metrics.iae,
    saturatedFraction: result.metrics.saturatedFraction,
    risk: judgeRisk(margins, diverged),
  };
  return { score, scenario, result };
}

/** Margins and simulated response of one set of gains, with the time series for the chart. */
export function simulateBenchLoop(model: FopdtModel, gains: PidGains, settings: BenchSettings): LoopResponse {
  const { score, scenario, result } = runLoop(model, gains, settings);
  const { output: u0, value: y0 } = settings.operatingPoint;
  return {
    score,
    scenario,
    t: result.t,
    r: result.r.map((v) => v + y0),
    y: result.y.map((v) => v + y0),
    u: result.u.map((v) => v + u0),
  };
}

/** Every proposal of every rule for the chosen controller kinds, each scored on the sampled loop. */
export function compareProposals(model: FopdtModel, settings: BenchSettings): ProposalRow[] {
  const proposals = proposeAllTunings({
    model,
    samplePeriod: settings.samplePeriod,
    closedLoopTimeConstant: settings.simcTimeConstant,
    lambda: settings.imcLambda,
  });
  const rows: ProposalRow[] = [];
  for (const proposal of proposals) {
    if (!settings.controllerKinds.includes(proposal.controller)) continue;
    const { score } = runLoop(model, { form: "standard", ...proposal.standard }, settings);
    rows.push({
      id: `${proposal.rule}-${proposal.controller}`,
      rule: proposal.rule,
      ruleLabel: RULE_LABELS[proposal.rule],
      kind: proposal.controller,
      standard: proposal.standard,
      parallel: proposal.parallel,
      ...score,
    });
  }
  return rows;
}

/** Both forms of hand-typed gains, or the reason they cannot be used. */
export function describeGains(gains: PidGains): { ok: true; standard: StandardGains; parallel: ParallelGains } | { ok: false; message: string } {
  try {
    const standard = toStandardGains(gains);
    return { ok: true, standard, parallel: standardToParallel(standard) };
  } catch (error) {
    if (error instanceof ControlInputError) return { ok: false, message: error.message };
    throw error;
  }
}

export type ModelEstimate =
  | { ok: true; model: FopdtModel; fit: { rmse: number; r2: number } }
  | { ok: false; message: string };

/** A two-point estimate scored on the same data, or the reason it could not be made. */
export function estimateTwoPoint(samples: StepTestData & { t: number[]; u: number[]; y: number[] }, method: "smith" | "sundaresan-krishnaswamy"): ModelEstimate {
  try {
    const answer = answerIdentify({ samples, method });
    return { ok: true, model: answer.model, fit: answer.fit };
  } catch (error) {
    if (error instanceof ControlInputError) return { ok: false, message: error.message };
    throw error;
  }
}

/**
 * The model's response on the test's own time grid to the test's own (held) input, exactly,
 * with the baseline that fits the data best for this model (the mean residual).
 */
export function modelResponseOnData(model: FopdtModel, data: StepTestData): number[] {
  const n = data.t.length;
  const { gain: k, timeConstant: tau, deadTime: theta } = model;
  const u0 = data.u[0];
  const w = new Array<number>(n);
  let j = 0;
  let v = 0;
  let x = 0;
  let now = data.t[0];
  const advance = (to: number) => {
    if (to > now) {
      x = v + (x - v) * Math.exp(-(to - now) / tau);
      now = to;
    }
  };
  for (let i = 0; i < n; i++) {
    while (j < n && data.t[j] + theta <= data.t[i]) {
      advance(data.t[j] + theta);
      v = data.u[j] - u0;
      j++;
    }
    advance(data.t[i]);
    w[i] = k * x;
  }
  let offset = 0;
  for (let i = 0; i < n; i++) offset += data.y[i] - w[i];
  offset /= n;
  return w.map((value) => value + offset);
}

/**
 * Indices to draw at most about `maxPoints` points of a long series: per bucket the first,
 * the extremes of every listed series and the last, so steps and peaks survive.
 */
export function decimationIndices(length: number, series: readonly (readonly number[])[], maxPoints = 1200): number[] {
  if (length <= maxPoints) return Array.from({ length }, (_, i) => i);
  const buckets = Math.max(1, Math.floor(maxPoints / (2 + 2 * series.length)));
  const size = length / buckets;
  const picked = new Set<number>();
  for (let b = 0; b < buckets; b++) {
    const start = Math.floor(b * size);
    const end = Math.min(length, Math.floor((b + 1) * size));
    if (end <= start) continue;
    picked.add(start);
    picked.add(end - 1);
    for (const s of series) {
      let lo = start;
      let hi = start;
      for (let i = start; i < end; i++) {
        if (s[i] < s[lo]) lo = i;
        if (s[i] > s[hi]) hi = i;
      }
      picked.add(lo);
      picked.add(hi);
    }
  }
  picked.add(length - 1);
  return [...picked].sort((a, b) => a - b);
}

/** An invented step test to try the bench with: a heater-like FOPDT with a little seeded noise. */
export const EXAMPLE_STEP_TEST = {
  model: { type: "fopdt", gain: 1.6, timeConstant: 42, deadTime: 6 } satisfies FopdtModel,
  samplePeriod: 0.5,
  duration: 300,
  stepTime: 20,
  output: [20, 30] as const,
  baseline: 45,
  noise: 0.08,
  units: { value: "°C", output: "%" },
};

export function generateExampleStepTest(seed = 7): { t: number[]; u: number[]; y: number[] } {
  const e = EXAMPLE_STEP_TEST;
  const { gain, timeConstant, deadTime } = e.model;
  const random = createRandomSource(seed);
  const n = Math.round(e.duration / e.samplePeriod) + 1;
  const t: number[] = [];
  const u: number[] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const time = i * e.samplePeriod;
    const since = time - e.stepTime - deadTime;
    const rise = since > 0 ? gain * (e.output[1] - e.output[0]) * (1 - Math.exp(-since / timeConstant)) : 0;
    t.push(Number(time.toFixed(3)));
    u.push(time >= e.stepTime ? e.output[1] : e.output[0]);
    y.push(Number((e.baseline + rise + e.noise * random.nextNormal()).toFixed(4)));
  }
  return { t, u, y };
}

export function toStepTestCsv(samples: { t: number[]; u: number[]; y: number[] }): string {
  const lines = ["t,u,y"];
  for (let i = 0; i < samples.t.length; i++) lines.push(`${samples.t[i]},${samples.u[i]},${samples.y[i]}`);
  return `${lines.join("\n")}\n`;
}
