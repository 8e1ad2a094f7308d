export { createDigestAccumulator, loadDisturbanceLimit, type DigestAccumulator, type DigestAccumulatorOptions, type DigestStats } from "./digest";
export {
  assessLoopHealth,
  BAND_RANK,
  bandOfRank,
  DEFAULT_SILENT_AFTER_S,
  isSilent,
  silentAssessment,
  bandForScore,
  HEALTH_BANDS,
  HEALTH_SCORE_TABLE,
  oscillationLimitPerHour,
  supervisionSeconds,
  SCORE_BANDS,
  scoreHealthSignals,
  signalPenalty,
  type HealthSignals,
  worseBand,
  type DigestSummary,
  type HealthAssessment,
  type HealthBand,
  type HealthThresholdSettings,
} from "./assess";
export { DIGEST_FIELDS, digestSqlType, exampleDigestFields, INT32_MAX, type DigestField, type DigestFieldName } from "./digest-fields";
export { type HealthDigest, inWindowOrder, windowSeconds } from "./series";
export { assessSaturation, hourlySaturation, medianOf, SATURATION_TREND_DAYS, theilSen, windowSaturationShare, type SaturationFigures, type TrendPoint } from "./saturation";
export { assessWindup, windowPinnedLowerBound, windowPinnedShare, type WindupFigures } from "./windup";
export { assessOscillation, HAGGLUND_DETECTION_LIMIT, oscillationLimitFromTu, type OscillationFigures } from "./oscillation";
export { assessDrift, cusumArl, DEFAULT_DRIFT_SETTINGS, oneSidedArl, stepCusum, type CusumState, type DriftFigures, type DriftSettings, type DriftState } from "./drift";
export { isSilentForInterval, lastDigestEnd, SILENCE_INTERVALS, silentAfterSeconds } from "./silence";
export { loopHealthFigures, type LoopHealthFigures, type LoopHealthFigureSettings } from "./figures";
