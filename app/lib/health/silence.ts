/**
 * Silence by the loop's expected digest interval: a loop is silent when no digest has ended for
 * SILENCE_INTERVALS (3) times the interval it is expected to send at (issue 12; the factor is
 * practice: one late digest or one lost in transit is not yet silence, three in a row are).
 * Written on the existing rule (assess.ts, isSilent), which callers given a fixed number of
 * seconds keep using.
 */
import { isSilent } from "./assess";
import type { HealthDigest } from "./series";

/** Missed intervals after which a loop is silent (practice). */
export const SILENCE_INTERVALS = 3;

/** Seconds without a digest after which a loop sending every `expectedIntervalS` is silent. */
export function silentAfterSeconds(expectedIntervalS: number): number {
  return SILENCE_INTERVALS * expectedIntervalS;
}

/** No digest yet, or none ended within the last 3 × the expected interval (exactly 3× is not yet silent). */
export function isSilentForInterval(lastDigestEnd: Date | null, expectedIntervalS: number, now: Date): boolean {
  return isSilent(lastDigestEnd, silentAfterSeconds(expectedIntervalS), now);
}

/** The end of the latest window at or before now (null without one). */
export function lastDigestEnd(digests: readonly Pick<HealthDigest, "windowEnd">[], now: Date): Date | null {
  let last: number | null = null;
  for (const d of digests) {
    const end = d.windowEnd.getTime();
    if (end <= now.getTime() && (last === null || end > last)) last = end;
  }
  return last === null ? null : new Date(last);
}
