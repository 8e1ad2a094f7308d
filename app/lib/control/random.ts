/**
 * A small seeded generator so simulations with noise are repeatable on every platform.
 * mulberry32 for uniforms, Box–Muller for normals (the second value is cached, so no
 * allocation happens per draw).
 */
export interface NormalSource {
  /** Standard normal draw. */
  nextNormal(): number;
  /** Uniform in [0, 1). */
  nextUniform(): number;
}

export function createRandomSource(seed: number): NormalSource {
  let state = seed >>> 0;
  let spare = 0;
  let hasSpare = false;
  const nextUniform = (): number => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const nextNormal = (): number => {
    if (hasSpare) {
      hasSpare = false;
      return spare;
    }
    // 1 - u keeps the logarithm's argument in (0, 1].
    const u1 = 1 - nextUniform();
    const u2 = nextUniform();
    const radius = Math.sqrt(-2 * Math.log(u1));
    spare = radius * Math.sin(2 * Math.PI * u2);
    hasSpare = true;
    return radius * Math.cos(2 * Math.PI * u2);
  };
  return { nextNormal, nextUniform };
}
