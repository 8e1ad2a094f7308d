/**
 * A loop's health from its recent digests: a band (steady, watch, act, silent), a 0–100
 * score and the reasons in words. Saturation share, clamped-integrator share and the error
 * limits have no single published threshold (app/lib/health/REFERENCES.md): they come from
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

const RANK: Record<HealthBand, number> = { steady: 0, watch: 1, act: 2, silent: 3 };

/** The worse of two bands (silent ranks worst: nothing is known). */
export function worseBand(a: HealthBand, b: HealthBand): HealthBand {
  return RANK[a] >= RANK[b] ? a : b;
}

export function bandForScore(score: number): Exclude<HealthBand, "silent"> {
  return score >= 80 ? "steady" : score >= 50 ? "watch" : "act";
}

/** Penalty 0 below watch, rising to 25 at watch and 50 at act (linear between, capped at 60). */
function penalty(value: number, watch: number, act: number): number {
  if (!(value > 0) || value < watch) return 0;
  if (value < act) return 25 + (25 * (value - watch)) / Math.max(act - watch, 1e-12);
  return Math.min(60, 50 + (10 * (value - act)) / Math.max(act, 1e-12));
}

export function assessLoopHealth(digests: DigestSummary[], thresholds: HealthThresholdSettings, now: Date): HealthAssessment {
  const last = digests.reduce<DigestSummary | undefined>((acc, d) => (!acc || d.windowEnd > acc.windowEnd ? d : acc), undefined);
  if (!last || now.getTime() - last.windowEnd.getTime() > thresholds.silentAfter * 1000) {
    return { band: "silent", score: null, reasons: [last ? "No digest received recently." : "No digest received yet."] };
  }
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
  const satShare = sat / samples;
  const clampShare = clamp / samples;
  const rmsRatio = Math.sqrt(err2 / samples) / thresholds.acceptableAmplitude;
  const oscPerHour = seconds > 0 ? (osc * 3600) / seconds : 0;

  const reasons: string[] = [];
  const pSat = penalty(satShare, thresholds.saturationWatch, thresholds.saturationAct);
  if (pSat > 0) reasons.push(`Output saturated ${Math.round(satShare * 100)} % of the time.`);
  const pClamp = penalty(clampShare, thresholds.clampWatch, thresholds.clampAct);
  if (pClamp > 0) reasons.push(`Integrator held at a limit ${Math.round(clampShare * 100)} % of the time.`);
  const pOsc = penalty(oscPerHour, thresholds.oscillationPerHour, thresholds.oscillationPerHour * 2);
  if (pOsc > 0) reasons.push(`${oscPerHour.toFixed(1)} load disturbances per hour (oscillation).`);
  const pErr = penalty(rmsRatio, thresholds.errRmsWatch, thresholds.errRmsWatch * 2);
  if (pErr > 0) reasons.push(`Error RMS ${rmsRatio.toFixed(1)}× the acceptable amplitude.`);
  const score = Math.max(0, Math.round(100 - pSat - pClamp - pOsc - pErr));
  return { band: bandForScore(score), score, reasons };
}
