/**
 * A loop's health from its recent digests: a band (steady, watch, act, silent), a 0–100
 * score by HEALTH_SCORE_TABLE and the reasons in words. Saturation share, clamped-integrator share and the error
 * limits have no single published threshold (app/lib/health/REFERENCES.md, "Loop health"): they come from
 * the loop template's settings, whose defaults are practice. Oscillation uses Hägglund's
 * rule (1995, memory): more than a set number of load-disturbance detections per time.
 */

export type HealthBand = "steady" | "watch" | "act" | "silent";
export const HEALTH_BANDS: readonly HealthBand[] = ["steady", "watch", "act", "silent"];

/** Limits at which health findings are raised; stored per loop template. */
export type HealthThresholdSettings = {
  /** Acceptable error amplitude a in process units (Hägglund's IAE limit uses it). */
  acceptableAmplitude: number;
  saturationWatch: number;
  saturationAct: number;
  clampWatch: number;
  clampAct: number;
  /** Load-disturbance detections per hour at which oscillation is flagged. */
  oscillationPerHour: number;
  /** Error RMS relative to the acceptable amplitude at which drift is flagged. */
  errRmsWatch: number;
  /** Seconds without a digest after which a loop is silent. */
  silentAfter: number;
};

export type DigestSummary = {
  windowStart: Date;
  windowEnd: Date;
  samples: number;
  errRms: number;
  satHighFrac: number;
  satLowFrac: number;
  intClampFrac: number;
  oscCount: number;
};

export type HealthAssessment = { band: HealthBand; score: number | null; reasons: string[] };

/** How bad each band is, for sorting and for a machine's worst loop (silent ranks worst: nothing is known). */
export const BAND_RANK: Record<HealthBand, number> = { steady: 0, watch: 1, act: 2, silent: 3 };

/** The band of a rank (BAND_RANK's inverse). */
export function bandOfRank(rank: number): HealthBand {
  return HEALTH_BANDS.find((band) => BAND_RANK[band] === rank) ?? "silent";
}

/** The worse of two bands. */
export function worseBand(a: HealthBand, b: HealthBand): HealthBand {
  return BAND_RANK[a] >= BAND_RANK[b] ? a : b;
}

/** Seconds without a digest after which a loop is silent, when its template sets none (practice: 15 one-minute windows). */
export const DEFAULT_SILENT_AFTER_S = 900;

/** The silence rule: no digest yet, or the last one ended more than `silentAfter` seconds ago. */
export function isSilent(lastDigestEnd: Date | null, silentAfterS: number | undefined, now: Date): boolean {
  return !lastDigestEnd || now.getTime() - lastDigestEnd.getTime() > (silentAfterS ?? DEFAULT_SILENT_AFTER_S) * 1000;
}

/** The silent band's assessment, in words. */
export function silentAssessment(lastDigestEnd: Date | null): HealthAssessment {
  return { band: "silent", score: null, reasons: [lastDigestEnd ? "No digest received recently." : "No digest received yet."] };
}

/**
 * Hägglund's oscillation rule as a rate (1995, memory; REFERENCES.md): more than 10 load
 * detections within Tsup = 50·Tu, i.e. 10·3600/(50·Tu) = 720/Tu detections per hour.
 */
export function oscillationLimitPerHour(ultimatePeriod: number): number {
  return (10 * 3600) / (50 * ultimatePeriod);
}

/** Score → band: steady from 80, watch from 50, act below 50. */
export const SCORE_BANDS = { steadyFrom: 80, watchFrom: 50 } as const;

export function bandForScore(score: number): Exclude<HealthBand, "silent"> {
  return score >= SCORE_BANDS.steadyFrom ? "steady" : score >= SCORE_BANDS.watchFrom ? "watch" : "act";
}

/** The measured values one assessment scores, each over all the digests given. */
export type HealthSignals = {
  /** Share of samples with the output at a limit (high or low), 0–1. */
  saturationShare: number;
  /** Share of samples with the integrator held, 0–1. */
  clampShare: number;
  /** Load-disturbance detections per hour (Hägglund 1995). */
  oscillationPerHour: number;
  /** Error RMS over the acceptable amplitude. */
  errorRmsRatio: number;
};

type SignalRow = {
  signal: keyof HealthSignals;
  /** Signals in the same group describe one problem: only the worst of them counts. */
  group: "windup" | "oscillation" | "error";
  watch: (t: HealthThresholdSettings) => number;
  act: (t: HealthThresholdSettings) => number;
  /** Where the penalty reaches 100 (the worst the signal can sensibly be). */
  full: (t: HealthThresholdSettings) => number;
  reason: (value: number) => string;
};

/**
 * THE health score, one row per signal (thresholds from the loop template's settings, whose
 * defaults are practice; see REFERENCES.md in this folder). Each signal's penalty:
 *
 *   value < watch            0
 *   watch ≤ value < act      25 … <50, linear       (score 75 … >50: band watch)
 *   act ≤ value < full       51 … <100, linear      (score 49 … >0:  band act)
 *   value ≥ full             100                    (score 0)
 *
 * Signals in one group describe one problem and count once, by their worst penalty:
 * saturation and a held integrator are the same windup episode seen twice. Groups add:
 * score = max(0, 100 − Σ group penalties), rounded down. So one signal at its watch limit
 * bands watch, one at its act limit bands act, and two problems at watch together band
 * watch (score 50); three band act.
 */
export const HEALTH_SCORE_TABLE: readonly SignalRow[] = [
  {
    signal: "saturationShare",
    group: "windup",
    watch: (t) => t.saturationWatch,
    act: (t) => t.saturationAct,
    full: () => 1,
    reason: (v) => `Output saturated ${Math.round(v * 100)} % of the time.`,
  },
  {
    signal: "clampShare",
    group: "windup",
    watch: (t) => t.clampWatch,
    act: (t) => t.clampAct,
    full: () => 1,
    reason: (v) => `Integrator held at a limit ${Math.round(v * 100)} % of the time.`,
  },
  {
    signal: "oscillationPerHour",
    group: "oscillation",
    watch: (t) => t.oscillationPerHour,
    act: (t) => 2 * t.oscillationPerHour,
    full: (t) => 4 * t.oscillationPerHour,
    reason: (v) => `${v.toFixed(1)} load disturbances per hour (oscillation).`,
  },
  {
    signal: "errorRmsRatio",
    group: "error",
    watch: (t) => t.errRmsWatch,
    act: (t) => 2 * t.errRmsWatch,
    full: (t) => 4 * t.errRmsWatch,
    reason: (v) => `Error RMS ${v.toFixed(1)}× the acceptable amplitude.`,
  },
];

/** One signal's penalty (0–100) by the table's rule. */
export function signalPenalty(value: number, watch: number, act: number, full: number): number {
  if (!(value >= watch) || !(value > 0)) return 0;
  if (value < act) return 25 + (25 * (value - watch)) / (act - watch);
  if (value >= full) return 100;
  return 51 + (49 * (value - act)) / (full - act);
}

/** Score and reasons for measured signals, by HEALTH_SCORE_TABLE. */
export function scoreHealthSignals(signals: HealthSignals, thresholds: HealthThresholdSettings): { score: number; reasons: string[] } {
  const worst = new Map<SignalRow["group"], number>();
  const reasons: string[] = [];
  for (const row of HEALTH_SCORE_TABLE) {
    const value = signals[row.signal];
    const penalty = signalPenalty(value, row.watch(thresholds), row.act(thresholds), row.full(thresholds));
    if (penalty > 0) reasons.push(row.reason(value));
    worst.set(row.group, Math.max(worst.get(row.group) ?? 0, penalty));
  }
  let total = 0;
  for (const penalty of worst.values()) total += penalty;
  // Floor, never round: a score must not round up across a band edge.
  return { score: Math.max(0, Math.floor(100 - total)), reasons };
}

/**
 * Hägglund's supervision time Tsup = 50·Tu, from the limit per hour (720/Tu): 36 000 / limit s.
 * Detections are counted over at least this long, so one load disturbance seen in a few
 * minutes of digests is not extrapolated into an oscillation rate (app/lib/health/REFERENCES.md).
 */
export function supervisionSeconds(oscillationLimitPerHour: number): number {
  return oscillationLimitPerHour > 0 ? 36_000 / oscillationLimitPerHour : 0;
}

export function assessLoopHealth(digests: DigestSummary[], thresholds: HealthThresholdSettings, now: Date): HealthAssessment {
  const last = digests.reduce<DigestSummary | undefined>((acc, d) => (!acc || d.windowEnd > acc.windowEnd ? d : acc), undefined);
  if (!last || isSilent(last.windowEnd, thresholds.silentAfter, now)) return silentAssessment(last?.windowEnd ?? null);
  let samples = 0;
  let sat = 0;
  let clamp = 0;
  let err2 = 0;
  let osc = 0;
  let seconds = 0;
  for (const d of digests) {
    samples += d.samples;
    sat += (d.satHighFrac + d.satLowFrac) * d.samples;
    clamp += d.intClampFrac * d.samples;
    err2 += d.errRms * d.errRms * d.samples;
    osc += d.oscCount;
    seconds += Math.max(0, (d.windowEnd.getTime() - d.windowStart.getTime()) / 1000);
  }
  if (samples === 0) return { band: "silent", score: null, reasons: ["Digests carry no samples."] };
  const signals: HealthSignals = {
    saturationShare: sat / samples,
    clampShare: clamp / samples,
    oscillationPerHour: (osc * 3600) / Math.max(seconds, supervisionSeconds(thresholds.oscillationPerHour)),
    errorRmsRatio: Math.sqrt(err2 / samples) / thresholds.acceptableAmplitude,
  };
  const { score, reasons } = scoreHealthSignals(signals, thresholds);
  return { band: bandForScore(score), score, reasons };
}
