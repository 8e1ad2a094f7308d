/**
 * A loop's digest series as the pure analytics read it: the fields they use, in window order.
 * Every figure in this folder is computed over `inWindowOrder(digests)`, never over arrival
 * order, so a backfilled history and the same digests arriving live give the same result.
 */

/** The digest fields the loop-health analytics read (names as in ./digest-fields.ts). */
export type HealthDigest = {
  windowStart: Date;
  windowEnd: Date;
  samples: number;
  iae: number;
  satHighFrac: number;
  satLowFrac: number;
  intClampFrac: number;
  oscCount: number;
  gainVersion: number;
};

export const HOUR_MS = 3_600_000;
export const DAY_MS = 24 * HOUR_MS;

/** Seconds a window covers (0 for an empty or inverted window). */
export function windowSeconds(d: Pick<HealthDigest, "windowStart" | "windowEnd">): number {
  return Math.max(0, (d.windowEnd.getTime() - d.windowStart.getTime()) / 1000);
}

/**
 * The digests sorted by window (start, then end), ties broken on every other field so the order
 * is total: two arrivals of the same set give the same sequence. Returns a new array.
 */
export function inWindowOrder<D extends Pick<HealthDigest, "windowStart" | "windowEnd">>(digests: readonly D[]): D[] {
  const tieBreak = ["gainVersion", "samples", "iae", "satHighFrac", "satLowFrac", "intClampFrac", "oscCount"] as const;
  const key = (d: D) => [d.windowStart.getTime(), d.windowEnd.getTime(), ...tieBreak.map((f) => (d as Partial<HealthDigest>)[f] ?? 0)];
  return [...digests].sort((a, b) => {
    const ka = key(a);
    const kb = key(b);
    for (let i = 0; i < ka.length; i++) if (ka[i] !== kb[i]) return ka[i] - kb[i];
    return 0;
  });
}

/** Digests whose window ended within (now − spanMs, now]: the span a figure "over 24 h" covers. */
export function endedWithin<D extends Pick<HealthDigest, "windowEnd">>(digests: readonly D[], spanMs: number, now: Date): D[] {
  const to = now.getTime();
  const from = to - spanMs;
  return digests.filter((d) => d.windowEnd.getTime() > from && d.windowEnd.getTime() <= to);
}

/** Sample-weighted mean of a per-window share (null when the windows carry no samples). */
export function sampleWeightedShare<D extends Pick<HealthDigest, "samples">>(digests: readonly D[], share: (d: D) => number): number | null {
  let samples = 0;
  let weighted = 0;
  for (const d of digests) {
    if (!(d.samples > 0)) continue;
    samples += d.samples;
    weighted += share(d) * d.samples;
  }
  return samples > 0 ? weighted / samples : null;
}
