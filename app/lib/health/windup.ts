/**
 * Windup: the share of time the integrator was held at a limit, and the share it was pinned —
 * held while the output sat at a limit, the integrator unable to help.
 *
 * A digest carries two shares per window (intClampFrac, satHigh+satLowFrac) but not their
 * overlap. Of two events with probabilities a and b, the overlap lies in
 * [max(0, a + b − 1), min(a, b)] (Fréchet bounds; derived). We report min(a, b), the upper
 * bound, because it is exact for the clamping anti-windup the devices run: clamping freezes the
 * integrator only while the output is past a limit and the error pushes further
 * (REFERENCES.md, "Discrete PID with anti-windup"), so the held samples are a subset of the
 * saturated ones and their overlap is the held share itself. The lower bound is returned beside it.
 */
import { DAY_MS, endedWithin, sampleWeightedShare, type HealthDigest } from "./series";
import { windowSaturationShare } from "./saturation";

type WindupDigest = Pick<HealthDigest, "windowEnd" | "samples" | "intClampFrac" | "satHighFrac" | "satLowFrac">;

/** One window's pinned share: min(held, saturated), the Fréchet upper bound (see the header). */
export function windowPinnedShare(d: Omit<WindupDigest, "windowEnd" | "samples">): number {
  return Math.min(d.intClampFrac, windowSaturationShare(d));
}

/** One window's least possible pinned share: max(0, held + saturated − 1) (Fréchet lower bound). */
export function windowPinnedLowerBound(d: Omit<WindupDigest, "windowEnd" | "samples">): number {
  return Math.max(0, d.intClampFrac + windowSaturationShare(d) - 1);
}

export type WindupFigures = {
  /** Sample-weighted share with the integrator held, last 24 h (null without samples). */
  share24h: number | null;
  /** Sample-weighted pinned share (held and saturated), last 24 h, by windowPinnedShare. */
  pinnedShare24h: number | null;
  /** The least pinned share the same windows allow. */
  pinnedLowerBound24h: number | null;
};

export function assessWindup(digests: readonly WindupDigest[], now: Date): WindupFigures {
  const day = endedWithin(digests, DAY_MS, now);
  return {
    share24h: sampleWeightedShare(day, (d) => d.intClampFrac),
    pinnedShare24h: sampleWeightedShare(day, windowPinnedShare),
    pinnedLowerBound24h: sampleWeightedShare(day, windowPinnedLowerBound),
  };
}
