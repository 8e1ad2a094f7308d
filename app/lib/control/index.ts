/**
 * Flyball control engine: pure computation, no I/O, runs in the browser and on the server.
 */
export { ControlInputError } from "./errors";
export {
  describeGainForms,
  parallelToStandard,
  seriesToStandard,
  checkGainSigns,
  standardToParallel,
  standardToSeries,
  toParallelGains,
  toStandardGains,
  type GainForms,
  type ParallelGains,
  type PidGains,
  type SeriesGains,
  type StandardGains,
} from "./forms";
export {
  createPidController,
  deriveIntegratorLimits,
  resolveDerivativeFilterTime,
  resolveTrackingTime,
  type AntiWindupMode,
  type DerivativeFilter,
  type IntegralPlacement,
  type OutputLimits,
  type PidControllerConfig,
  type PidStepper,
} from "./pid";
export {
  computeHoldIntegral,
  createPlantSimulator,
  discretisePlant,
  evaluateDiscretePlantFrequency,
  evaluatePlantFrequency,
  toStateSpace,
  toTransferFunction,
  type DiscretePlant,
  type FopdtModel,
  type IpdtModel,
  type PlantModel,
  type PlantSimulator,
  type SopdtModel,
  type StateSpace,
  type TransferFunction,
  type TransferFunctionModel,
} from "./plant";
export {
  computeStepResponse,
  computeSteadyStateGain,
  createExactStepEvaluator,
  defaultStepDuration,
  type StepInfo,
  type StepResponse,
  type StepResponseOptions,
} from "./step-response";
export {
  computeSetpointStepMetrics,
  simulateClosedLoop,
  type ClosedLoopOptions,
  type ClosedLoopResult,
  type LoopMetrics,
  type ValueStep,
} from "./simulate";
export {
  computeFrequencyResponse,
  computeMargins,
  computeUltimatePoint,
  type Crossover,
  type FrequencyPoint,
  type LoopSpec,
  type StabilityMargins,
  type UltimatePoint,
} from "./frequency";
export { assessClosedLoopStability, type StabilityLoop, type StabilityVerdict } from "./stability";
export {
  CONTROLLER_TYPES,
  TUNING_RULES,
  proposeAllTunings,
  proposeTuning,
  type ControllerType,
  type TuningProposal,
  type TuningRequest,
  type TuningRule,
} from "./tuning";
export {
  fitFopdt,
  identifyTwoPoint,
  type FitOptions,
  type FopdtFitResult,
  type StepTestData,
  type TwoPointMethod,
  type TwoPointResult,
} from "./identify";
export { createRandomSource, type NormalSource } from "./random";
export type { Complex } from "./polynomial";
