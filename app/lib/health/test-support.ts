// Helpers for this folder's tests only: a small seeded PRNG and a digest factory.
import type { HealthDigest } from "./series";

/** mulberry32: a 32-bit seeded generator, uniform in [0, 1). Small, fast, good enough for test streams. */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4_294_967_296;
  };
}

/** Standard normal draws from a uniform generator (Box–Muller). */
export function seededNormal(seed: number): () => number {
  const uniform = seededRandom(seed);
  return () => {
    const u = 1 - uniform();
    const v = uniform();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  };
}

/** A quiet digest for a window [start, start + seconds), one sample a second; override any field. */
export function makeDigest(start: Date, seconds: number, fields: Partial<HealthDigest> = {}): HealthDigest {
  return {
    windowStart: start,
    windowEnd: new Date(start.getTime() + seconds * 1000),
    samples: seconds,
    iae: 0,
    satHighFrac: 0,
    satLowFrac: 0,
    intClampFrac: 0,
    oscCount: 0,
    gainVersion: 1,
    ...fields,
  };
}

/** Fisher–Yates shuffle with a seeded generator (a new array). */
export function shuffled<T>(items: readonly T[], seed: number): T[] {
  const random = seededRandom(seed);
  const out = [...items];
  for (let i = out.length - 1; i > 0; i--) {
    const j = Math.floor(random() * (i + 1));
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}
