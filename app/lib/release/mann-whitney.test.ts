import { describe, expect, it } from "vitest";
import { mannWhitneyGreater, normalUpperTail } from "./mann-whitney";

// Sources: app/lib/release/REFERENCES.md.
const Y = [13.9, 14.6, 13.2, 15.1, 14.0, 13.7, 14.8, 14.3];
const X = [12.1, 11.4, 13.0, 12.7, 11.9, 12.3, 12.8, 11.6];

describe("mannWhitneyGreater", () => {
  it("worked example (Mann & Whitney 1947; values computed with scipy.stats.mannwhitneyu): U = 64, exact p = 7.77e-5", () => {
    const r = mannWhitneyGreater(Y, X);
    expect(r.method).toBe("exact");
    expect(r.u).toBe(64);
    expect(r.p).toBeCloseTo(7.77e-5, 7);
    expect(r.p).toBeCloseTo(1 / 12870, 12); // one ordering of C(16, 8)
  });

  it("same example, normal approximation with continuity correction: p = 4.70e-4", () => {
    const r = mannWhitneyGreater(Y, X, { method: "normal" });
    expect(r.u).toBe(64);
    expect(r.p).toBeCloseTo(4.7e-4, 5);
  });

  it("the other direction gives U = 0 and p = 1", () => {
    const r = mannWhitneyGreater(X, Y);
    expect(r.u).toBe(0);
    expect(r.p).toBeCloseTo(1, 12);
  });

  it("critical value table for m = n = 8, one-sided α = 0.05: U ≥ 49 rejects, U = 48 does not (memory: table of critical U 15 for the lower tail)", () => {
    // Two samples interleaved so that U is exactly 49 and 48.
    const base = [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16];
    const at = (u: number) => {
      // Start from the fully separated order (U = 64) and swap adjacent pairs down to u.
      const first = base.slice(8);
      const second = base.slice(0, 8);
      let current = 64;
      for (let i = 0; i < 8 && current > u; i++) {
        for (let j = 7; j >= 0 && current > u; j--) {
          if (first[i] > second[j]) {
            [first[i], second[j]] = [second[j], first[i]];
            const r = mannWhitneyGreater(first, second);
            current = r.u;
            if (current < u) [first[i], second[j]] = [second[j], first[i]];
            current = mannWhitneyGreater(first, second).u;
          }
        }
      }
      return mannWhitneyGreater(first, second);
    };
    const r49 = at(49);
    const r48 = at(48);
    expect(r49.u).toBe(49);
    expect(r48.u).toBe(48);
    expect(r49.p).toBeLessThanOrEqual(0.05);
    expect(r48.p).toBeGreaterThan(0.05);
  });

  it("exact small case (computed with scipy.stats.mannwhitneyu, exact): U = 30, p = 0.0021645", () => {
    const r = mannWhitneyGreater([1.2, 1.35, 1.5, 1.1, 1.42], [1.0, 0.95, 1.05, 0.9, 1.02, 0.98]);
    expect(r.u).toBe(30);
    expect(r.p).toBeCloseTo(0.0021645021645, 10);
    const s = mannWhitneyGreater([1.2, 1.35, 0.5, 1.1, 1.42], [1.0, 0.95, 1.05, 0.9, 1.02, 0.98]);
    expect(s.u).toBe(24);
    expect(s.p).toBeCloseTo(0.0627705627706, 10);
  });

  it("ties use the normal approximation with tie correction (computed with scipy.stats.mannwhitneyu, asymptotic)", () => {
    const r = mannWhitneyGreater([1.5, 2, 2, 3, 4, 4, 4, 5], [1, 1, 2, 3, 3]);
    expect(r.method).toBe("normal");
    expect(r.u).toBe(31);
    expect(r.p).toBeCloseTo(0.05876243404831958, 5);
    const s = mannWhitneyGreater([3, 4, 2, 6, 2, 5], [9, 7, 5, 10, 6, 8]);
    expect(s.u).toBe(2);
    expect(s.p).toBeCloseTo(0.9960472777460493, 5);
  });

  it("normal tail: Q(1.6449) = 0.05, Q(0) = 0.5 (standard normal table, published)", () => {
    expect(normalUpperTail(1.6449)).toBeCloseTo(0.05, 4);
    expect(normalUpperTail(0)).toBeCloseTo(0.5, 7);
    expect(normalUpperTail(-1.96)).toBeCloseTo(0.975, 4);
  });

  it("refuses empty or non-finite samples", () => {
    expect(() => mannWhitneyGreater([], [1])).toThrow(RangeError);
    expect(() => mannWhitneyGreater([Number.NaN], [1])).toThrow(RangeError);
  });
});
