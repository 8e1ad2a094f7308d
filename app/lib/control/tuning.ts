/**
 * Tuning rules. Every proposal comes in standard, parallel and (when a real factorisation
 * exists) series form. Model conventions: FOPDT K e^{−θs}/(τs+1), SOPDT with τ1 ≥ τ2,
 * integrating k' e^{−θs}/s.
 *
 * Choices the literature leaves open (documented here so the UI can say them):
 * - ziegler-nichols-step PI: Ti = θ/0.3 (= 3.33θ, the original reset rate 0.3/θ).
 * - simc: τc defaults to θ (the "tight" setting); with a sample period h, θ + h/2 is used
 *   (the half rule). PI for FOPDT and integrating plants, PID (series, τD = τ2) for SOPDT;
 *   PI on an SOPDT first reduces it by the half rule (τ1 + τ2/2, θ + τ2/2).
 * - imc: λ defaults to max(θ, τ/4) — never tighter than the dead time, and a quarter of the
 *   lag when the dead time is small. PI is the lambda rule, PID the first-order-Padé rule.
 * - ziegler-nichols (ultimate cycle): from given Ku, Pu, or from a model via the margins code.
 */
import { ControlInputError, requireFinite, requirePositive } from "./errors";
import { describeGainForms, seriesToStandard, type GainForms, type StandardGains } from "./forms";
import { computeUltimatePoint } from "./frequency";
import { toTransferFunction, type FopdtModel, type IpdtModel, type PlantModel, type SopdtModel } from "./plant";

export type TuningRule = "ziegler-nichols" | "ziegler-nichols-step" | "cohen-coon" | "simc" | "imc" | "amigo";
export type ControllerType = "P" | "PI" | "PID";

export const TUNING_RULES: readonly TuningRule[] = [
  "ziegler-nichols",
  "ziegler-nichols-step",
  "cohen-coon",
  "simc",
  "imc",
  "amigo",
];
export const CONTROLLER_TYPES: readonly ControllerType[] = ["P", "PI", "PID"];

export interface TuningRequest {
  rule: TuningRule;
  controller: ControllerType;
  /** Plant model; for "ziegler-nichols" any model (Ku, Pu are computed from it). */
  model?: PlantModel;
  /** Ultimate gain and period for "ziegler-nichols". */
  ultimate?: { gain: number; period: number };
  /** SIMC closed-loop time constant τc (s). */
  closedLoopTimeConstant?: number;
  /** IMC / lambda closed-loop time constant λ (s). */
  lambda?: number;
  /** Controller sample period (s); SIMC adds h/2 to the dead time. */
  samplePeriod?: number;
}

export interface TuningProposal extends GainForms {
  rule: TuningRule;
  controller: ControllerType;
}

function notDefined(rule: TuningRule, controller: ControllerType, detail = ""): never {
  throw new ControlInputError("controller", `the ${rule} rule does not define a ${controller} controller${detail}`);
}

function requireModel<T extends PlantModel["type"]>(
  request: TuningRequest,
  types: readonly T[],
): Extract<PlantModel, { type: T }> {
  const model = request.model;
  if (!model) throw new ControlInputError("model", `the ${request.rule} rule needs a plant model`);
  toTransferFunction(model); // validates every field
  if (!(types as readonly string[]).includes(model.type)) {
    throw new ControlInputError("model.type", `the ${request.rule} rule needs a ${types.join(" or ")} model`);
  }
  return model as Extract<PlantModel, { type: T }>;
}

function requireDeadTime(request: TuningRequest, theta: number): void {
  if (!(theta > 0)) throw new ControlInputError("model.deadTime", `the ${request.rule} rule needs a dead time above zero`);
}

function fromUltimate(request: TuningRequest): StandardGains {
  let ku: number;
  let pu: number;
  if (request.ultimate) {
    ku = requirePositive("ultimate.gain", request.ultimate.gain);
    pu = requirePositive("ultimate.period", request.ultimate.period);
  } else {
    if (!request.model) throw new ControlInputError("ultimate", "give the ultimate gain and period, or a plant model");
    const point = computeUltimatePoint(request.model, request.samplePeriod);
    if (!point) throw new ControlInputError("model", "has no ultimate point (its phase never reaches −180°)");
    ku = point.ultimateGain;
    pu = point.ultimatePeriod;
  }
  switch (request.controller) {
    case "P":
      return { kc: 0.5 * ku, ti: null, td: 0 };
    case "PI":
      return { kc: 0.45 * ku, ti: pu / 1.2, td: 0 };
    case "PID":
      return { kc: 0.6 * ku, ti: pu / 2, td: pu / 8 };
  }
}

function fromStepResponse(request: TuningRequest): StandardGains {
  const model = requireModel(request, ["fopdt", "ipdt"] as const);
  requireDeadTime(request, model.deadTime);
  const theta = model.deadTime;
  // a = K·θ/τ is the intercept of the steepest tangent; for an integrator the slope is k'.
  const a = model.type === "fopdt" ? (model.gain * theta) / model.timeConstant : model.gain * theta;
  if (a === 0) throw new ControlInputError("model.gain", "must be non-zero");
  switch (request.controller) {
    case "P":
      return { kc: 1 / a, ti: null, td: 0 };
    case "PI":
      return { kc: 0.9 / a, ti: theta / 0.3, td: 0 };
    case "PID":
      return { kc: 1.2 / a, ti: 2 * theta, td: 0.5 * theta };
  }
}

function fromCohenCoon(request: TuningRequest): StandardGains {
  const model = requireModel(request, ["fopdt"] as const) as FopdtModel;
  requireDeadTime(request, model.deadTime);
  const { gain: k, timeConstant: tau, deadTime: theta } = model;
  if (k === 0) throw new ControlInputError("model.gain", "must be non-zero");
  const r = theta / tau;
  switch (request.controller) {
    case "P":
      return { kc: ((1 / r) * (1 + r / 3)) / k, ti: null, td: 0 };
    case "PI":
      return { kc: ((1 / r) * (0.9 + r / 12)) / k, ti: (theta * (30 + 3 * r)) / (9 + 20 * r), td: 0 };
    case "PID":
      return {
        kc: ((1 / r) * (4 / 3 + r / 4)) / k,
        ti: (theta * (32 + 6 * r)) / (13 + 8 * r),
        td: (4 * theta) / (11 + 2 * r),
      };
  }
}

function fromSimc(request: TuningRequest): StandardGains {
  const model = requireModel(request, ["fopdt", "sopdt", "ipdt"] as const);
  if (request.controller === "P") notDefined("simc", "P");
  if (model.gain === 0) throw new ControlInputError("model.gain", "must be non-zero");
  const halfSample = request.samplePeriod !== undefined ? requirePositive("samplePeriod", request.samplePeriod) / 2 : 0;
  const tauC = (theta: number): number => {
    if (request.closedLoopTimeConstant !== undefined) {
      return requirePositive("closedLoopTimeConstant", request.closedLoopTimeConstant);
    }
    if (!(theta > 0)) {
      throw new ControlInputError("closedLoopTimeConstant", "must be given when the dead time is zero (the default τc = θ)");
    }
    return theta;
  };
  if (model.type === "ipdt") {
    if (request.controller === "PID") notDefined("simc", "PID", " for an integrating plant without a lag");
    const theta = model.deadTime + halfSample;
    const tc = tauC(theta);
    return { kc: 1 / (model.gain * (tc + theta)), ti: 4 * (tc + theta), td: 0 };
  }
  let k: number;
  let tau1: number;
  let tau2 = 0;
  let theta: number;
  if (model.type === "fopdt") {
    if (request.controller === "PID") notDefined("simc", "PID", " from a first-order model; give an sopdt model");
    k = model.gain;
    tau1 = model.timeConstant;
    theta = model.deadTime + halfSample;
  } else {
    const sop = model as SopdtModel;
    k = sop.gain;
    const big = Math.max(sop.timeConstant, sop.timeConstant2);
    const small = Math.min(sop.timeConstant, sop.timeConstant2);
    theta = sop.deadTime + halfSample;
    if (request.controller === "PI") {
      // Half rule: half of the second lag goes to the dominant lag, half to the dead time.
      tau1 = big + small / 2;
      theta += small / 2;
    } else {
      tau1 = big;
      tau2 = small;
    }
  }
  const tc = tauC(theta);
  const kc = tau1 / (k * (tc + theta));
  const ti = Math.min(tau1, 4 * (tc + theta));
  if (request.controller === "PI") return { kc, ti, td: 0 };
  return seriesToStandard({ kc, ti, td: tau2 });
}

function fromImc(request: TuningRequest): StandardGains {
  const model = requireModel(request, ["fopdt"] as const) as FopdtModel;
  if (request.controller === "P") notDefined("imc", "P");
  const { gain: k, timeConstant: tau, deadTime: theta } = model;
  if (k === 0) throw new ControlInputError("model.gain", "must be non-zero");
  const lambda = request.lambda !== undefined ? requirePositive("lambda", request.lambda) : Math.max(theta, tau / 4);
  if (request.controller === "PI") return { kc: tau / (k * (lambda + theta)), ti: tau, td: 0 };
  return {
    kc: (2 * tau + theta) / (k * (2 * lambda + theta)),
    ti: tau + theta / 2,
    td: (tau * theta) / (2 * tau + theta),
  };
}

function fromAmigo(request: TuningRequest): StandardGains {
  const model = requireModel(request, ["fopdt"] as const) as FopdtModel;
  if (request.controller === "P") notDefined("amigo", "P");
  requireDeadTime(request, model.deadTime);
  const { gain: kp, timeConstant: t, deadTime: l } = model;
  if (kp === 0) throw new ControlInputError("model.gain", "must be non-zero");
  if (request.controller === "PI") {
    return {
      kc: 0.15 / kp + ((0.35 - (l * t) / ((l + t) * (l + t))) * t) / (kp * l),
      ti: 0.35 * l + (13 * l * t * t) / (t * t + 12 * l * t + 7 * l * l),
      td: 0,
    };
  }
  return {
    kc: (1 / kp) * (0.2 + (0.45 * t) / l),
    ti: (l * (0.4 * l + 0.8 * t)) / (l + 0.1 * t),
    td: (0.5 * l * t) / (0.3 * l + t),
  };
}

/** One rule, one controller type → gains in all forms. Throws ControlInputError when undefined. */
export function proposeTuning(request: TuningRequest): TuningProposal {
  if (!CONTROLLER_TYPES.includes(request.controller)) {
    throw new ControlInputError("controller", "must be P, PI or PID");
  }
  if (request.samplePeriod !== undefined) requireFinite("samplePeriod", request.samplePeriod);
  let standard: StandardGains;
  switch (request.rule) {
    case "ziegler-nichols":
      standard = fromUltimate(request);
      break;
    case "ziegler-nichols-step":
      standard = fromStepResponse(request);
      break;
    case "cohen-coon":
      standard = fromCohenCoon(request);
      break;
    case "simc":
      standard = fromSimc(request);
      break;
    case "imc":
      standard = fromImc(request);
      break;
    case "amigo":
      standard = fromAmigo(request);
      break;
    default:
      throw new ControlInputError("rule", `must be one of ${TUNING_RULES.join(", ")}`);
  }
  return { rule: request.rule, controller: request.controller, ...describeGainForms(standard) };
}

/** Every rule × controller type that is defined for the inputs; undefined pairs are skipped. */
export function proposeAllTunings(request: Omit<TuningRequest, "rule" | "controller">): TuningProposal[] {
  // Bad input must surface, not silently empty the list.
  if (request.model) toTransferFunction(request.model);
  const out: TuningProposal[] = [];
  for (const rule of TUNING_RULES) {
    for (const controller of CONTROLLER_TYPES) {
      try {
        out.push(proposeTuning({ ...request, rule, controller }));
      } catch (error) {
        if (!(error instanceof ControlInputError)) throw error;
      }
    }
  }
  return out;
}

export type { FopdtModel, IpdtModel, SopdtModel };
