import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { computeFrequencyResponse, computeMargins, computeUltimatePoint, type LoopSpec } from "./frequency";
import { findPolynomialRoots } from "./polynomial";
import { simulateClosedLoop } from "./simulate";
import { assessClosedLoopStability } from "./stability";

const cubic = { type: "tf" as const, numerator: [1], denominator: [1, 3, 3, 1] };

const loops: [string, LoopSpec][] = [
  ["FOPDT + PI", { plant: { type: "fopdt", gain: 2, timeConstant: 10, deadTime: 2 }, controller: { gains: { form: "standard", kc: 2.2917, ti: 4.7077, td: 0 } } }],
  ["cubic + ZN PID", { plant: cubic, controller: { gains: { form: "standard", kc: 4.8, ti: 1.8138, td: 0.4534 } } }],
  ["SOPDT + PID", { plant: { type: "sopdt", gain: 1, timeConstant: 10, timeConstant2: 2, deadTime: 1 }, controller: { gains: { form: "standard", kc: 6.25, ti: 10, td: 1.6 }, derivativeFilter: { n: 10 } } }],
  ["IPDT + PI", { plant: { type: "ipdt", gain: 1, deadTime: 1 }, controller: { gains: { form: "standard", kc: 0.5, ti: 8, td: 0 } } }],
  ["sampled FOPDT + PI", { plant: { type: "fopdt", gain: 2, timeConstant: 10, deadTime: 2.05 }, samplePeriod: 0.3, controller: { gains: { form: "standard", kc: 2.2917, ti: 4.7077, td: 0 } } }],
  ["sampled cubic + PID", { plant: cubic, samplePeriod: 0.1, controller: { gains: { form: "parallel", kp: 3, ki: 1.2, kd: 1 }, derivativeFilter: { n: 8 } } }],
];

/** Margins by brute force on a very dense log grid, nearest-sample crossings. */
function bruteForce(loop: LoopSpec, range: [number, number]) {
  const count = 200_000;
  const omegas: number[] = [];
  const [lo, hi] = [Math.log(range[0]), Math.log(range[1])];
  for (let i = 0; i < count; i++) omegas.push(Math.exp(lo + ((hi - lo) * i) / (count - 1)));
  const points = computeFrequencyResponse(loop, omegas);
  let gm = Infinity;
  let pm = Infinity;
  let ms = 0;
  for (let i = 1; i < count; i++) {
    const a = points[i - 1];
    const b = points[i];
    if (Math.sign(a.im) !== Math.sign(b.im) && b.re < 0) gm = Math.min(gm, 1 / b.magnitude);
    if (Math.sign(a.magnitude - 1) !== Math.sign(b.magnitude - 1)) {
      let p = 180 + (Math.atan2(b.im, b.re) * 180) / Math.PI;
      if (p > 180) p -= 360;
      pm = Math.min(pm, p);
    }
    ms = Math.max(ms, 1 / Math.hypot(1 + b.re, b.im));
  }
  return { gm, pm, ms };
}

describe("stability margins", () => {
  it("ZN P control (Kc = Ku/2) on 1/(s+1)^3 has GM exactly 2", () => {
    // REFERENCES.md "Closed-form facts" (published): GM = 2 with Kc = Ku/2 = 4.
    const m = computeMargins({ plant: cubic, controller: { gains: { form: "standard", kc: 4, ti: null, td: 0 } } });
    expect(m.gainMargin).toBeCloseTo(2, 9);
    expect(m.phaseCrossoverFrequency).toBeCloseTo(Math.sqrt(3), 9);
    // Derived: |L(jωc)| = 4/(1 + ωc²)^{3/2} = 1 → ωc = √(4^{2/3} − 1).
    expect(m.gainCrossoverFrequency).toBeCloseTo(Math.sqrt(Math.pow(4, 2 / 3) - 1), 9);
    expect(m.phaseMargin).toBeCloseTo(180 - 3 * (Math.atan(m.gainCrossoverFrequency!) * 180) / Math.PI, 8);
    expect(m.delayMargin).toBeCloseTo((m.phaseMargin! * Math.PI) / 180 / m.gainCrossoverFrequency!, 12);
  });

  it("integrator plus delay under P control: Ku = ωu = π/(2θ), Pu = 4θ", () => {
    // REFERENCES.md "Closed-form facts" (published).
    for (const theta of [0.5, 2, 7]) {
      const point = computeUltimatePoint({ type: "ipdt", gain: 1, deadTime: theta })!;
      expect(point.ultimateGain).toBeCloseTo(Math.PI / (2 * theta), 9);
      expect(point.ultimateFrequency).toBeCloseTo(Math.PI / (2 * theta), 9);
      expect(point.ultimatePeriod).toBeCloseTo(4 * theta, 8);
    }
  });

  it.each(loops)("agree with a brute-force dense sweep (%s)", (_, loop) => {
    // REFERENCES.md "Margins" (published definitions): GM = 1/|L(jω180)|, PM = 180° + ∠L(jωc),
    // Ms = max|1/(1 + L)|; derived by dense evaluation of the same L.
    const m = computeMargins(loop);
    const brute = bruteForce(loop, m.omegaRange);
    if (m.gainMargin === null) expect(brute.gm).toBe(Infinity);
    else expect(Math.abs(m.gainMargin - brute.gm) / brute.gm).toBeLessThan(1e-3);
    expect(Math.abs(m.phaseMargin! - brute.pm)).toBeLessThan(0.05);
    // These loops are all stable (derived: each has PM > 0 and a single crossover).
    expect(m.stable).toBe(true);
    expect(m.peakSensitivity!).toBeGreaterThanOrEqual(brute.ms * (1 - 1e-9));
    expect(Math.abs(m.peakSensitivity! - brute.ms) / brute.ms).toBeLessThan(1e-4);
  });

  it.each(loops)("GM ≥ Ms/(Ms − 1) and PM ≥ 2·asin(1/(2Ms)) (%s)", (_, loop) => {
    // REFERENCES.md "Margins" (published inequalities).
    const m = computeMargins(loop);
    const ms = m.peakSensitivity!;
    if (m.gainMargin !== null) expect(m.gainMargin).toBeGreaterThanOrEqual(ms / (ms - 1) - 1e-9);
    expect(m.phaseMargin!).toBeGreaterThanOrEqual(((2 * Math.asin(1 / (2 * ms))) * 180) / Math.PI - 1e-9);
  });

  it("adding the delay margin to the plant leaves no phase margin", () => {
    // Derived: extra delay DM rotates L(jωc) by ωc·DM = PM.
    const plant = { type: "fopdt" as const, gain: 2, timeConstant: 10, deadTime: 2 };
    const controller = { gains: { form: "standard" as const, kc: 1.25, ti: 10, td: 0 } };
    const m = computeMargins({ plant, controller });
    const delayed = computeMargins({ plant: { ...plant, deadTime: 2 + m.delayMargin! }, controller });
    expect(delayed.phaseMargin).toBeCloseTo(0, 6);
  });

  it("the sampled loop approaches the continuous one as h → 0", () => {
    // Derived: the ZOH adds about ωh/2 of phase lag, which vanishes with h.
    const plant = { type: "fopdt" as const, gain: 2, timeConstant: 10, deadTime: 2 };
    const controller = { gains: { form: "standard" as const, kc: 2, ti: 6, td: 0 } };
    const continuous = computeMargins({ plant, controller });
    const sampled = computeMargins({ plant, controller, samplePeriod: 0.001 });
    expect(Math.abs(sampled.gainMargin! - continuous.gainMargin!) / continuous.gainMargin!).toBeLessThan(1e-3);
    expect(Math.abs(sampled.phaseMargin! - continuous.phaseMargin!)).toBeLessThan(0.1);
    const coarse = computeMargins({ plant, controller, samplePeriod: 0.5 });
    expect(coarse.phaseMargin!).toBeLessThan(continuous.phaseMargin!);
  });

  it("a loop with no phase crossover reports a null gain margin", () => {
    const m = computeMargins({ plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 0 }, controller: { gains: { form: "parallel", kp: 2, ki: 0, kd: 0 } } });
    expect(m.gainMargin).toBeNull();
    expect(m.phaseCrossoverFrequency).toBeNull();
    expect(m.phaseMargin).not.toBeNull();
  });

  it("a loop with GM < 1 diverges in simulation and one with GM > 1 converges", () => {
    // REFERENCES.md "Margins" (published definition of GM) with the sampled loop the simulator runs.
    const h = 0.05;
    const ku = computeUltimatePoint(cubic, h)!.ultimateGain;
    const run = (kp: number) => {
      const margins = computeMargins({ plant: cubic, samplePeriod: h, controller: { gains: { form: "parallel", kp, ki: 0, kd: 0 } } });
      const { y } = simulateClosedLoop({ plant: cubic, samplePeriod: h, duration: 150, controller: { gains: { form: "parallel", kp, ki: 0, kd: 0 }, antiWindup: "none" } });
      const swing = (from: number, to: number) => {
        let lo = Infinity;
        let hi = -Infinity;
        for (let k = from; k < to; k++) {
          lo = Math.min(lo, y[k]);
          hi = Math.max(hi, y[k]);
        }
        return hi - lo;
      };
      const n = y.length;
      return { gm: margins.gainMargin!, early: swing(Math.floor(n * 0.1), Math.floor(n * 0.3)), late: swing(Math.floor(n * 0.8), n), y };
    };
    const unstable = run(1.1 * ku);
    expect(unstable.gm).toBeLessThan(1);
    expect(unstable.late).toBeGreaterThan(10 * unstable.early);
    const stable = run(0.9 * ku);
    expect(stable.gm).toBeGreaterThan(1);
    expect(stable.late).toBeLessThan(0.1 * stable.early);
    // Derived: P control settles at kp/(1 + kp) (lightly damped at 0.9·Ku, hence 1 %).
    expect(Math.abs(stable.y[stable.y.length - 1] - (0.9 * ku) / (1 + 0.9 * ku))).toBeLessThan(0.01);
  });

  it("GM scales as 1/k when the controller gain is multiplied by k (property)", () => {
    // REFERENCES.md "Margins" (derived): |kL| = k|L| with the phase crossovers unchanged.
    fc.assert(
      fc.property(
        fc.double({ min: 0.5, max: 3, noNaN: true }),
        fc.double({ min: 1, max: 10, noNaN: true }),
        fc.double({ min: 0.2, max: 3, noNaN: true }),
        fc.double({ min: 0.2, max: 5, noNaN: true }),
        fc.boolean(),
        (gain, tau, theta, k, sampled) => {
          const plant = { type: "fopdt" as const, gain, timeConstant: tau, deadTime: theta };
          const kc = tau / (gain * 2 * theta);
          const ti = Math.min(tau, 8 * theta);
          const samplePeriod = sampled ? theta / 7 : undefined;
          const base = computeMargins({ plant, samplePeriod, controller: { gains: { form: "standard", kc, ti, td: 0 } } });
          const scaled = computeMargins({ plant, samplePeriod, controller: { gains: { form: "standard", kc: k * kc, ti, td: 0 } } });
          expect(base.gainMargin).not.toBeNull();
          expect(Math.abs(scaled.gainMargin! * k - base.gainMargin!) / base.gainMargin!).toBeLessThan(1e-6);
        },
      ),
      { numRuns: 40 },
    );
  });
});

describe("closed-loop stability verdict (issue 8, defect 3)", () => {
  // REFERENCES.md "Closed-loop stability" (derived from the characteristic equations).
  it("FOPDT K=1, τ=1, θ=1 under P kp=5 is unstable: no Ms", () => {
    // kp = 5 > Ku = 2.2611, so unstable; the margins are still reported (GM 0.452, PM −179°).
    const m = computeMargins({ plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1 }, controller: { gains: { form: "parallel", kp: 5, ki: 0, kd: 0 } } });
    expect(m.stable).toBe(false);
    expect(m.peakSensitivity).toBeNull();
    expect(m.gainMargin).toBeCloseTo(2.2611 / 5, 3);
  });

  it("FOPDT K=1, τ=0.01, θ=0, PI Kc=0.5, Ti=0.01 at h=1 is unstable: no Ms (was 0.039)", () => {
    // χ(z) ≈ z² − 0.5z + 49.5, roots of modulus √49.5 = 7.04 > 1.
    const loop = {
      plant: { type: "fopdt", gain: 1, timeConstant: 0.01, deadTime: 0 } as const,
      controller: { gains: { form: "standard", kc: 0.5, ti: 0.01, td: 0 } as const },
      samplePeriod: 1,
    };
    const m = computeMargins(loop);
    expect(m.stable).toBe(false);
    expect(m.peakSensitivity).toBeNull();
    expect(assessClosedLoopStability(loop).unstablePoles).toBe(2);
  });

  it("2(s+2)²/s³ under P=1 is stable although GM = 0.5", () => {
    // s³ + 2s² + 8s + 8 = 0: roots −1.1397, −0.4302 ± 2.6143j (all in the left half-plane).
    const loop: LoopSpec = { plant: { type: "tf", numerator: [2, 8, 8], denominator: [1, 0, 0, 0] }, controller: { gains: { form: "parallel", kp: 1, ki: 0, kd: 0 } } };
    const roots = findPolynomialRoots([1, 2, 8, 8]).sort((a, b) => a.re - b.re);
    expect(roots[0].re).toBeCloseTo(-1.1397, 4);
    expect(roots[1].re).toBeCloseTo(-0.4302, 4);
    expect(Math.abs(roots[1].im)).toBeCloseTo(2.6143, 4);
    const m = computeMargins(loop);
    expect(m.gainMargin).toBeCloseTo(0.5, 6);
    expect(m.stable).toBe(true);
    expect(m.peakSensitivity!).toBeGreaterThanOrEqual(1);
    // Derived: at h = 0.01 the sampled loop is close to the continuous one, so stable too.
    expect(assessClosedLoopStability({ ...loop, samplePeriod: 0.01 }).stable).toBe(true);
  });

  it("agrees with the ultimate gain of FOPDT 1/(s+1)·e^(−s) on both sides of Ku", () => {
    // Derived: ωu + atan(ωu) = π → ωu = 2.0288, Ku = √(1 + ωu²) = 2.2611.
    const plant = { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1 } as const;
    const verdict = (kp: number) => assessClosedLoopStability({ plant, controller: { gains: { form: "parallel", kp, ki: 0, kd: 0 } } });
    expect(verdict(2.25).stable).toBe(true);
    expect(verdict(2.27).stable).toBe(false);
    expect(verdict(2.27).unstablePoles).toBe(2);
  });

  it("sampled and continuous verdicts agree with simulation over random PI loops (property)", () => {
    // Derived: a stable sampled loop's step response settles; an unstable one grows.
    fc.assert(
      fc.property(
        fc.double({ min: 0.5, max: 5, noNaN: true }),
        fc.double({ min: 0.1, max: 3, noNaN: true }),
        fc.double({ min: 0.1, max: 4, noNaN: true }),
        fc.double({ min: 0.3, max: 5, noNaN: true }),
        (tau, theta, kc, ti) => {
          const plant = { type: "fopdt", gain: 1, timeConstant: tau, deadTime: theta } as const;
          const controller = { gains: { form: "standard", kc, ti, td: 0 } as const };
          const h = theta / 10;
          const verdict = assessClosedLoopStability({ plant, controller, samplePeriod: h });
          const run = simulateClosedLoop({ plant, controller, samplePeriod: h, duration: 400 * (tau + theta) });
          const tail = run.y.slice(-Math.floor(run.y.length / 10)).map((v) => Math.abs(v - 1));
          const settled = run.divergedAt === null && Math.max(...tail) < 1e-3;
          const growing = run.divergedAt !== null || Math.max(...tail) > 1;
          if (settled) expect(verdict.stable).toBe(true);
          if (growing) expect(verdict.stable).toBe(false);
        },
      ),
      { numRuns: 40 },
    );
  });

  it("counts the poles of a sampled loop with a long delay line", () => {
    // Derived: integrator 1/s with θ = 50 s at h = 0.01 (5000 samples): Ku = π/(2θ) = 0.0314.
    const plant = { type: "ipdt", gain: 1, deadTime: 50 } as const;
    const at = (kp: number) => assessClosedLoopStability({ plant, controller: { gains: { form: "parallel", kp, ki: 0, kd: 0 } }, samplePeriod: 0.01 });
    expect(at(0.03).stable).toBe(true);
    expect(at(0.033).stable).toBe(false);
  });
});
