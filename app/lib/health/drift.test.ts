// Drift by a two-sided tabular CUSUM on IAE per second (REFERENCES.md in this folder, "Page 1954":
// Page 1954; Montgomery's tabular form; Siegmund's approximation of the average run length).
import { describe, expect, it } from "vitest";
import { assessDrift, cusumArl, DEFAULT_DRIFT_SETTINGS, oneSidedArl, stepCusum, type CusumState } from "./drift";
import { makeDigest, seededNormal, shuffled } from "./test-support";

const now = new Date("2026-12-02T12:00:00Z");
const { k, h, baselineWindows: N } = DEFAULT_DRIFT_SETTINGS;
const durations = [60, 120, 90]; // windows differ in length

/** Windows back to back ending at now, IAE per second `rates[i]`, all of gain version `version[i]` (default 1). */
function stream(rates: number[], versions: number[] = []) {
  const total = rates.reduce((s, _, i) => s + durations[i % 3], 0);
  let t = now.getTime() - total * 1000;
  return rates.map((rate, i) => {
    const seconds = durations[i % 3];
    const d = makeDigest(new Date(t), seconds, { iae: Math.max(0, rate) * seconds, gainVersion: versions[i] ?? 1 });
    t += seconds * 1000;
    return d;
  });
}

/** N standard normals moved to sample mean exactly 0 and sample std exactly 1, so the learnt baseline is the true one. */
function exactBaseline(normal: () => number): number[] {
  const z = Array.from({ length: N }, normal);
  const m = z.reduce((a, b) => a + b, 0) / N;
  const s = Math.sqrt(z.reduce((a, b) => a + (b - m) ** 2, 0) / (N - 1));
  return z.map((v) => (v - m) / s);
}

describe("Siegmund's approximation of the run length (Siegmund 1985)", () => {
  // REFERENCES.md, "Page 1954" (derived from the formula): k = 0.5, h = 5: one side 938.2,
  // two-sided 469.1, shift δ = 1: 10.34; h = 4: 338.1, 169.0, 8.34.
  const cases = [
    { h: 5, oneSided: 938.2, twoSided: 469.1, shifted: 10.34 },
    { h: 4, oneSided: 338.1, twoSided: 169.0, shifted: 8.34 },
  ];
  it.each(cases)("k = 0.5, h = $h", ({ h, oneSided, twoSided, shifted }) => {
    expect(oneSidedArl(0, 0.5, h)).toBeCloseTo(oneSided, 1);
    expect(cusumArl(0, 0.5, h)).toBeCloseTo(twoSided, 0);
    expect(cusumArl(1, 0.5, h)).toBeCloseTo(shifted, 2);
  });
});

describe("the tabular CUSUM step (Page 1954, Montgomery's tabular form)", () => {
  // Derived by hand, k = 0.5: S⁺ = max(0, S⁺ + z − 0.5), S⁻ = max(0, S⁻ − z − 0.5).
  const cases = [
    { from: { high: 0, low: 0 }, z: 2, to: { high: 1.5, low: 0 } },
    { from: { high: 1.5, low: 0 }, z: -1, to: { high: 0, low: 0.5 } },
    { from: { high: 0, low: 0.5 }, z: -3, to: { high: 0, low: 3 } },
    { from: { high: 4, low: 0 }, z: 0.5, to: { high: 4, low: 0 } },
    { from: { high: 0.2, low: 0.2 }, z: 0, to: { high: 0, low: 0 } },
  ];
  it.each(cases)("from $from with z = $z", ({ from, z, to }) => {
    expect(stepCusum(from, z, 0.5)).toEqual(to);
  });
});

describe("drift states", () => {
  const normal = seededNormal(7);
  const base = exactBaseline(normal).map((z) => 1 + 0.3 * z);

  it("learns for N windows after a gain change, then judges", () => {
    const learning = assessDrift(stream(base.slice(0, N - 1)), now);
    expect(learning).toMatchObject({ state: "learning", baselineMean: null, baselineStd: null, cusumHigh: 0, cusumLow: 0, limit: h, sinceGainVersion: 1, baselineCount: N - 1 });
    const judged = assessDrift(stream(base), now);
    // The baseline was moved to mean 1, std 0.3 exactly (IAE per second).
    expect(judged.state).toBe("in_control");
    expect(judged.baselineMean).toBeCloseTo(1, 12);
    expect(judged.baselineStd).toBeCloseTo(0.3, 12);
  });

  it("divides IAE by each window's seconds: a steady rate in windows of 60, 120 and 90 s is in control", () => {
    const rates = [...base, ...Array.from({ length: 40 }, () => 1)];
    const figures = assessDrift(stream(rates), now);
    expect(figures.state).toBe("in_control");
    expect(figures.cusumHigh).toBe(0);
    expect(figures.cusumLow).toBe(0);
  });

  it("flags a sustained rise, and starts learning again at a gain change", () => {
    const rates = [...base, ...Array.from({ length: 20 }, () => 1.6)]; // +2 std each window
    expect(assessDrift(stream(rates), now)).toMatchObject({ state: "drifting", sinceGainVersion: 1 });
    // Derived: each window adds 2 − 0.5 = 1.5, so S⁺ passes 5 at the 4th window (6.0).
    expect(assessDrift(stream(rates), now).firstSignal?.window).toBe(4);
    const retuned = assessDrift(stream([...rates, 1, 1, 1], [...rates.map(() => 1), 2, 2, 2]), now);
    expect(retuned).toMatchObject({ state: "learning", sinceGainVersion: 2, baselineCount: 3, cusumHigh: 0 });
  });

  it("a sustained fall drifts through the low side", () => {
    const figures = assessDrift(stream([...base, ...Array.from({ length: 10 }, () => 0.4)]), now);
    expect(figures.state).toBe("drifting");
    expect(figures.cusumLow).toBeGreaterThan(h);
  });

  it("gives the same figures for the same windows in any arrival order", () => {
    const digests = stream([...base, ...Array.from({ length: 30 }, () => 1 + 0.3 * normal())]);
    expect(assessDrift(shuffled(digests, 3), now)).toEqual(assessDrift(digests, now));
  });
});

describe("run lengths against Siegmund's approximation (k = 0.5, h = 5)", () => {
  const streams = 1000;

  it("a 30 % step in IAE (1 baseline std) is flagged within the predicted run length", () => {
    // IAE per second: mean 1, std 0.3, so a 30 % step is a shift δ = 1 std. Each stream: a baseline
    // of N windows with exactly that mean and std, then the stepped level with the same noise,
    // through assessDrift on digests of 60, 120 and 90 s.
    const predicted = cusumArl(1, k, h);
    const runLengths: number[] = [];
    for (let seed = 1; seed <= streams; seed++) {
      const normal = seededNormal(seed);
      const rates = [...exactBaseline(normal).map((z) => 1 + 0.3 * z), ...Array.from({ length: 80 }, () => 1.3 + 0.3 * normal())];
      const figures = assessDrift(stream(rates), now);
      runLengths.push(figures.firstSignal?.window ?? Infinity);
    }
    const mean = runLengths.reduce((a, b) => a + b, 0) / streams;
    const sorted = [...runLengths].sort((a, b) => a - b);
    const median = sorted[streams / 2];
    console.log(
      `drift, 30 % step (δ = 1 std), k = ${k}, h = ${h}: predicted ARL (Siegmund) ${predicted.toFixed(2)} windows; ` +
        `observed over ${streams} seeded streams mean ${mean.toFixed(2)}, median ${median}, 90th percentile ${sorted[Math.floor(streams * 0.9)]}`,
    );
    expect(Number.isFinite(mean)).toBe(true);
    // The typical stream is flagged within the predicted run length (run lengths are right-skewed).
    expect(median).toBeLessThanOrEqual(predicted);
    // Siegmund's approximation is within a few per cent of the exact ARL (Montgomery's table: 10.4, memory).
    expect(Math.abs(mean - predicted) / predicted).toBeLessThan(0.1);
  });

  it("the in-control false-alarm rate matches the in-control run length", () => {
    // Known baseline (z already standardised): the case Siegmund's approximation describes.
    // Each stream runs stepCusum (assessDrift's step) until a false alarm.
    const predicted = cusumArl(0, k, h);
    let windows = 0;
    for (let seed = 1; seed <= streams; seed++) {
      const normal = seededNormal(100_000 + seed);
      let s: CusumState = { high: 0, low: 0 };
      do {
        s = stepCusum(s, normal(), k);
        windows++;
      } while (s.high <= h && s.low <= h);
    }
    const observedArl = windows / streams;
    const rate = streams / windows;
    // For contrast, not asserted: the same scheme with the baseline learnt from N = 24 noisy
    // windows (as assessDrift learns it); the error in the learnt mean and std moves each
    // stream's run length up or down, so its pooled rate need not match the formula.
    let learntWindows = 0;
    let learntAlarms = 0;
    let learntCapped = 0;
    for (let seed = 1; seed <= 200; seed++) {
      const normal = seededNormal(200_000 + seed);
      const base = Array.from({ length: N }, normal);
      const m = base.reduce((a, b) => a + b, 0) / N;
      const sd = Math.sqrt(base.reduce((a, b) => a + (b - m) ** 2, 0) / (N - 1));
      let s: CusumState = { high: 0, low: 0 };
      for (let i = 0; i < 5000; i++) {
        s = stepCusum(s, (normal() - m) / sd, k);
        learntWindows++;
        if (s.high > h || s.low > h) {
          learntAlarms++;
          break;
        }
        if (i === 4999) learntCapped++;
      }
    }
    console.log(
      `drift in control, k = ${k}, h = ${h}: predicted two-sided ARL (Siegmund) ${predicted.toFixed(1)} windows (one side alone ${oneSidedArl(0, k, h).toFixed(1)}), ` +
        `false-alarm rate ${(1 / predicted).toFixed(5)} per window; observed over ${streams} seeded streams ARL ${observedArl.toFixed(1)}, rate ${rate.toFixed(5)} per window. ` +
        `With a baseline learnt from ${N} windows (200 streams, capped at 5000): ${(learntAlarms / learntWindows).toFixed(5)} per window (ARL ${(learntWindows / learntAlarms).toFixed(0)}; ${learntCapped} streams without an alarm in 5000)`,
    );
    // 1000 run lengths of mean ≈ 469 and std ≈ 469: the standard error is about 3 %; allow 10 %.
    expect(Math.abs(observedArl - predicted) / predicted).toBeLessThan(0.1);
  });
});
