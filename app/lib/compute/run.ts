// The compute API's answers, built from the control engine. Pure: the server routes and the
// tuning bench page call the same functions, so what the page shows is what the API says.
import {
  computeMargins,
  computeStepResponse,
  fitFopdt,
  identifyTwoPoint,
  proposeTuning,
  simulateClosedLoop,
  type ControllerType,
  type DerivativeFilter,
  type PidControllerConfig,
  type PidGains,
  type PlantModel,
  type TuningRule,
  type ValueStep,
} from "~/lib/control";
import { requireSimulationWithinLimit } from "./limits";
import type { ControllerInput, IdentifyRequest, MarginsRequest, PlantInput, SimulateRequest, StepInfoRequest, TuneRequest } from "./schemas";

export function toPlantModel(plant: PlantInput): PlantModel {
  if (plant.type === "sopdt") {
    const [t1, t2] = plant.timeConstants;
    return { type: "sopdt", gain: plant.gain, timeConstant: t1, timeConstant2: t2, deadTime: plant.deadTime };
  }
  return plant;
}

export function toGains(controller: ControllerInput): PidGains {
  if (controller.form === "parallel") return { form: "parallel", kp: controller.kp, ki: controller.ki, kd: controller.kd };
  return { form: controller.form, kc: controller.kc, ti: controller.ti, td: controller.td };
}

function derivativeFilter(controller: ControllerInput): DerivativeFilter | undefined {
  return controller.filterN === undefined ? undefined : { n: controller.filterN };
}

export function toControllerConfig(controller: ControllerInput): Omit<PidControllerConfig, "samplePeriod"> {
  return {
    gains: toGains(controller),
    derivativeFilter: derivativeFilter(controller),
    outputLimits: controller.outputLimits ? { min: controller.outputLimits[0], max: controller.outputLimits[1] } : undefined,
    antiWindup: controller.antiWindup,
    trackingTime: controller.trackingTime,
    setpointWeight: controller.setpointWeight,
  };
}

export function answerMargins(request: MarginsRequest) {
  const m = computeMargins({
    plant: toPlantModel(request.plant),
    controller: { gains: toGains(request.controller), derivativeFilter: derivativeFilter(request.controller) },
    samplePeriod: request.samplePeriod,
  });
  return {
    // From the closed-loop poles; Ms is null when the loop is unstable.
    stable: m.stable,
    gainMargin: m.gainMargin,
    phaseCrossoverFrequency: m.phaseCrossoverFrequency,
    phaseMargin: m.phaseMargin,
    gainCrossoverFrequency: m.gainCrossoverFrequency,
    delayMargin: m.delayMargin,
    peakSensitivity: m.peakSensitivity !== null && Number.isFinite(m.peakSensitivity) ? m.peakSensitivity : null,
  };
}

export function answerTune(request: TuneRequest) {
  const lambdaLike = request.closedLoopTimeConstant;
  const proposal = proposeTuning({
    rule: request.rule as TuningRule,
    controller: request.controller.toUpperCase() as ControllerType,
    model: request.model ? toPlantModel(request.model) : undefined,
    ultimate: request.ultimate ? { gain: request.ultimate.ku, period: request.ultimate.pu } : undefined,
    closedLoopTimeConstant: request.rule === "simc" ? lambdaLike : undefined,
    lambda: request.rule === "imc" ? lambdaLike : undefined,
    samplePeriod: request.samplePeriod,
  });
  return {
    rule: proposal.rule,
    controller: request.controller,
    standard: proposal.standard,
    parallel: proposal.parallel,
    ...(proposal.series ? { series: proposal.series } : {}),
  };
}

export function answerIdentify(request: IdentifyRequest) {
  const data = request.samples;
  if (request.method === "least-squares") {
    const result = fitFopdt(data);
    return { model: result.model, fit: result.fit };
  }
  const twoPoint = identifyTwoPoint(data, request.method);
  // Score the two-point model on the same data without refitting it.
  const scored = fitFopdt(data, { initial: twoPoint.model, maxIterations: 0 });
  return { model: twoPoint.model, fit: scored.fit };
}

function asSteps(value: number | ValueStep | ValueStep[] | undefined): ValueStep[] | undefined {
  if (value === undefined) return undefined;
  if (typeof value === "number") return [{ time: 0, value }];
  return Array.isArray(value) ? value : [value];
}

export function answerSimulate(request: SimulateRequest) {
  requireSimulationWithinLimit(request);
  const result = simulateClosedLoop({
    plant: toPlantModel(request.plant),
    controller: toControllerConfig(request.controller),
    samplePeriod: request.samplePeriod,
    duration: request.duration,
    setpoint: asSteps(request.setpoint),
    loadDisturbance: asSteps(request.loadStep),
    noise: request.noise,
  });
  // A diverging run stops at its first non-finite value: the series end there.
  return {
    t: result.t,
    r: result.r,
    y: result.y,
    u: result.u,
    metrics: result.metrics,
    diverged: result.divergedAt !== null,
    divergedAt: result.divergedAt,
  };
}

export function answerStepInfo(request: StepInfoRequest) {
  const { info } = computeStepResponse(toPlantModel(request.plant), { duration: request.duration });
  return {
    riseTime: info.riseTime,
    settlingTime: info.settlingTime,
    overshootPercent: info.overshootPercent,
    peak: info.peak,
    peakTime: info.peakTime,
    steadyState: info.steadyState,
  };
}
