/**
 * Oscillation by Hägglund's rule (1995, memory; REFERENCES.md, "Load-disturbance detection and
 * oscillation"): a loop oscillates when more than 10 load-disturbance detections fall within the
 * supervision time Tsup = 50·Tu. The devices count detections per window (oscCount).
 *
 * The count is taken over the windows of the last Tsup before the latest window's end (windows
 * wholly inside it; digests after `now` are ignored). The rate is that count over Tsup — never
 * over less observed time, so one load step in a few minutes of digests is not extrapolated into
 * an oscillation (as assess.ts does). Anchoring at the latest window rather than at `now` keeps a
 * gap in delivery from emptying the count; silence is judged on its own (silence.ts).
 */
import { oscillationLimitPerHour, supervisionSeconds } from "./assess";
import { windowSeconds, type HealthDigest } from "./series";

/** Hägglund's count: more than this many detections within Tsup is oscillation. */
export const HAGGLUND_DETECTION_LIMIT = 10;

type OscillationDigest = Pick<HealthDigest, "windowStart" | "windowEnd" | "oscCount">;

export type OscillationFigures = {
  /** Detections within the supervision time, per hour of it (null without a window). */
  detectionsPerHour: number | null;
  /** The rule as a rate: 10 per 50·Tu, i.e. 720/Tu per hour. */
  limitPerHour: number;
  /** Detections counted within the supervision time. */
  detections: number;
  /** Seconds of windows observed within it (≤ supervisionSeconds). */
  observedSeconds: number;
  supervisionSeconds: number;
  /** More than 10 detections within Tsup. */
  oscillating: boolean;
};

/** `limitPerHour` is the template's oscillation limit (720/Tu); see `oscillationLimitFromTu` for Tu. */
export function assessOscillation(digests: readonly OscillationDigest[], limitPerHour: number, now: Date): OscillationFigures {
  const tsup = supervisionSeconds(limitPerHour);
  const seen = digests.filter((d) => d.windowEnd.getTime() <= now.getTime());
  const figures = { limitPerHour, detections: 0, observedSeconds: 0, supervisionSeconds: tsup, oscillating: false };
  if (seen.length === 0 || !(tsup > 0)) return { ...figures, detectionsPerHour: null };
  const latest = Math.max(...seen.map((d) => d.windowEnd.getTime()));
  const from = latest - tsup * 1000;
  let detections = 0;
  let observedSeconds = 0;
  for (const d of seen) {
    if (d.windowStart.getTime() < from) continue;
    detections += d.oscCount;
    observedSeconds += windowSeconds(d);
  }
  return {
    ...figures,
    detections,
    observedSeconds,
    detectionsPerHour: (detections * 3600) / tsup,
    oscillating: detections > HAGGLUND_DETECTION_LIMIT,
  };
}

/** The template's limit per hour from the ultimate period Tu in seconds (720/Tu; assess.ts). */
export const oscillationLimitFromTu = oscillationLimitPerHour;
