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
