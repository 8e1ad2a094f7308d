// The checks a gain set must pass to be proposed (pure; the server runs them, the pages show
// them). Sources: app/lib/control/REFERENCES.md, "Gain-set checks".
//   finite             every number is a finite number, periods and N positive, b in [0, 1]
//   envelope           each parallel gain inside the template's safety envelope, and the
//                      output range inside the template's
//   integrator_limits  the integrator's range (integral contribution, output units) is a
//                      non-empty part of the output range
//   closed_loop        on the template's reference plant, sampled at the gain set's period:
//                      stable (closed-loop poles), gain margin ≥ min, phase margin ≥ min
import { computeMargins, ControlInputError, type PlantModel } from "~/lib/control";
import type { GainSetCheck, GainSetChecks, GainSetMargins } from "./types";

export type CheckedGainSet = {
  /** Parallel gains, as devices receive them. */
  gains: { kp: number; ki: number; kd: number };
  /** The gains as entered, when they were entered in another form (checked for finiteness). */
  entered?: Record<string, number | null | string>;
  filterN: number | null;
  setpointWeight: number;
  trackingTimeS: number | null;
  outputMin: number;
  outputMax: number;
  integratorMin: number;
  integratorMax: number;
  samplePeriodS: number;
};

export type CheckTemplate = {
  key: string;
  envelope: { kp: [number, number]; ki: [number, number]; kd: [number, number] };
  outputMin: number;
  outputMax: number;
  referenceModel: PlantModel | null;
  minGainMargin: number;
  minPhaseMarginDeg: number;
};

const fmt = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(4)).toString() : String(v));

function checkFinite(set: CheckedGainSet): GainSetCheck {
  const bad: string[] = [];
  const numbers: Record<string, number | null> = {
    kp: set.gains.kp,
    ki: set.gains.ki,
    kd: set.gains.kd,
    outputMin: set.outputMin,
    outputMax: set.outputMax,
    integratorMin: set.integratorMin,
    integratorMax: set.integratorMax,
    samplePeriodS: set.samplePeriodS,
    setpointWeight: set.setpointWeight,
    filterN: set.filterN,
    trackingTimeS: set.trackingTimeS,
  };
  for (const [name, value] of Object.entries(set.entered ?? {})) if (typeof value === "number") numbers[`entered.${name}`] = value;
  for (const [name, value] of Object.entries(numbers)) {
    if (value === null) continue;
    if (typeof value !== "number" || !Number.isFinite(value)) bad.push(name);
  }
  if (bad.length) return { name: "finite", passed: false, message: `Not finite numbers: ${bad.join(", ")}.`, fields: bad };
  const wrong: [string, string][] = [];
  if (!(set.samplePeriodS > 0)) wrong.push(["samplePeriodS", "sample period must be above 0 s"]);
  if (set.filterN !== null && !(set.filterN > 0)) wrong.push(["filterN", "filter N must be above 0"]);
  if (set.trackingTimeS !== null && !(set.trackingTimeS > 0)) wrong.push(["trackingTimeS", "tracking time must be above 0 s"]);
  if (!(set.setpointWeight >= 0 && set.setpointWeight <= 1)) wrong.push(["setpointWeight", "set-point weight b must be between 0 and 1"]);
  if (wrong.length) return { name: "finite", passed: false, message: `${wrong.map(([, m]) => m).join("; ")}.`, fields: wrong.map(([f]) => f) };
  return { name: "finite", passed: true, message: "Every value is a finite number in its range." };
}

function checkEnvelope(set: CheckedGainSet, template: CheckTemplate): GainSetCheck {
  const outside: string[] = [];
  const fields: string[] = [];
  for (const name of ["kp", "ki", "kd"] as const) {
    const [min, max] = template.envelope[name];
    const value = set.gains[name];
    if (value < min || value > max) {
      outside.push(`${name} = ${fmt(value)} is outside ${fmt(min)} … ${fmt(max)}`);
      fields.push(name);
    }
  }
  if (set.outputMin < template.outputMin || set.outputMax > template.outputMax || !(set.outputMin < set.outputMax)) {
    outside.push(`output range ${fmt(set.outputMin)} … ${fmt(set.outputMax)} is not a range inside the template's ${fmt(template.outputMin)} … ${fmt(template.outputMax)}`);
    fields.push("outputMin", "outputMax");
  }
  if (outside.length) return { name: "envelope", passed: false, message: `Outside the safety envelope of ${template.key}: ${outside.join("; ")}.`, fields };
  return { name: "envelope", passed: true, message: `Gains and output range inside the safety envelope of ${template.key}.` };
}

function checkIntegratorLimits(set: CheckedGainSet): GainSetCheck {
  const problems: string[] = [];
  if (!(set.integratorMin < set.integratorMax)) problems.push(`the integrator's minimum ${fmt(set.integratorMin)} is not below its maximum ${fmt(set.integratorMax)}`);
  if (set.integratorMin < set.outputMin || set.integratorMax > set.outputMax) {
    problems.push(`the integrator range ${fmt(set.integratorMin)} … ${fmt(set.integratorMax)} reaches outside the output range ${fmt(set.outputMin)} … ${fmt(set.outputMax)}`);
  }
  if (problems.length) return { name: "integrator_limits", passed: false, message: `Integrator limits: ${problems.join("; ")}.`, fields: ["integratorMin", "integratorMax"] };
  return { name: "integrator_limits", passed: true, message: `Integrator range ${fmt(set.integratorMin)} … ${fmt(set.integratorMax)} lies within the output range.` };
}

/** Margins of the sampled loop on a plant (null when they cannot be computed). */
export function computeGainSetMargins(set: Pick<CheckedGainSet, "gains" | "filterN" | "samplePeriodS">, plant: PlantModel, options: { continuous?: boolean } = {}): GainSetMargins {
  const m = computeMargins({
    plant,
    controller: { gains: { form: "parallel", ...set.gains }, derivativeFilter: set.gains.kd === 0 ? "none" : { n: set.filterN ?? 10 } },
    ...(options.continuous ? {} : { samplePeriod: set.samplePeriodS }),
  });
  return { stable: m.stable, gainMargin: m.gainMargin, phaseMargin: m.phaseMargin, delayMargin: m.delayMargin, peakSensitivity: m.peakSensitivity };
}

function checkClosedLoop(set: CheckedGainSet, template: CheckTemplate, continuous: boolean): { check: GainSetCheck; margins: GainSetMargins | null } {
  if (!template.referenceModel) {
    return { check: { name: "closed_loop", passed: false, message: `${template.key} has no reference model, so stability and margins cannot be checked.` }, margins: null };
  }
  let margins: GainSetMargins;
  try {
    margins = computeGainSetMargins(set, template.referenceModel, { continuous });
  } catch (error) {
    if (error instanceof ControlInputError) return { check: { name: "closed_loop", passed: false, message: `The loop cannot be analysed: ${error.message}.` }, margins: null };
    throw error;
  }
  if (!margins.stable) return { check: { name: "closed_loop", passed: false, message: "The loop is unstable on the template's reference model." }, margins };
  const problems: string[] = [];
  // No phase crossover: the gain can grow without limit (GM = ∞). No gain crossover: |L| < 1
  // everywhere, so no phase margin constrains it.
  if (margins.gainMargin !== null && margins.gainMargin < template.minGainMargin) problems.push(`gain margin ${fmt(margins.gainMargin)} is below the template's ${fmt(template.minGainMargin)}`);
  if (margins.phaseMargin !== null && margins.phaseMargin < template.minPhaseMarginDeg) problems.push(`phase margin ${fmt(margins.phaseMargin)}° is below the template's ${fmt(template.minPhaseMarginDeg)}°`);
  if (problems.length) return { check: { name: "closed_loop", passed: false, message: `Stable, but ${problems.join(" and ")}.` }, margins };
  const gm = margins.gainMargin === null ? "∞" : fmt(margins.gainMargin);
  const pm = margins.phaseMargin === null ? "—" : `${fmt(margins.phaseMargin)}°`;
  return { check: { name: "closed_loop", passed: true, message: `Stable on the reference model; gain margin ${gm} (at least ${fmt(template.minGainMargin)}), phase margin ${pm} (at least ${fmt(template.minPhaseMarginDeg)}°).` }, margins };
}

/**
 * Run every check. When values are not finite the others are reported as not run.
 * `continuous` analyses the continuous loop instead of the sampled one (for tests against
 * closed-form values); the server always checks the sampled loop.
 */
export function checkGainSet(set: CheckedGainSet, template: CheckTemplate, { now = new Date(), continuous = false }: { now?: Date; continuous?: boolean } = {}): GainSetChecks {
  const finite = checkFinite(set);
  if (!finite.passed) {
    const notRun = (name: GainSetCheck["name"]): GainSetCheck => ({ name, passed: false, message: "Not run: fix the values first." });
    return { passed: false, checkedAt: now.toISOString(), checks: [finite, notRun("envelope"), notRun("integrator_limits"), notRun("closed_loop")], margins: null };
  }
  const closed = checkClosedLoop(set, template, continuous);
  const checks = [finite, checkEnvelope(set, template), checkIntegratorLimits(set), closed.check];
  return { passed: checks.every((c) => c.passed), checkedAt: now.toISOString(), checks, margins: closed.margins };
}

export const CHECK_LABELS: Record<GainSetCheck["name"], string> = {
  finite: "Finite values",
  envelope: "Safety envelope",
  integrator_limits: "Integrator limits",
  closed_loop: "Closed loop on the reference model",
};
