import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { ControlInputError } from "./errors";
import { computeSetpointStepMetrics, simulateClosedLoop } from "./simulate";

const plant = { type: "fopdt" as const, gain: 2, timeConstant: 10, deadTime: 2 };
const pi = { gains: { form: "standard" as const, kc: 1.25, ti: 10, td: 0 } };

describe("closed-loop simulation", () => {
  it("returns aligned series and metrics for a set-point step", () => {
    const res = simulateClosedLoop({ plant, controller: pi, samplePeriod: 0.1, duration: 100 });
    expect(res.t.length).toBe(1001);
    expect(res.t[1000]).toBeCloseTo(100, 12);
    expect(res.r[0]).toBe(1);
    expect(res.y[0]).toBe(0);
    // Derived: the loop is 0.25·e^(−2s)/s (PM ≈ 61°), so only a small overshoot.
    expect(res.metrics.overshootPercent).toBeGreaterThan(0);
    expect(res.metrics.overshootPercent).toBeLessThan(10);
    expect(res.metrics.riseTime).toBeGreaterThan(0);
    expect(res.metrics.settlingTime).toBeGreaterThan(res.metrics.riseTime!);
    expect(res.metrics.iae).toBeGreaterThan(0);
    expect(res.metrics.ise).toBeLessThan(res.metrics.iae);
    // Derived: y stays 0 for θ/h = 20 samples while I grows by Kc·h/Ti = 0.0125 per sample,
    // so u peaks at 1.25 + 20·0.0125 = 1.5 on sample 20.
    expect(res.metrics.peakAbsControl).toBeCloseTo(1.5, 9);
    expect(res.u[20]).toBeCloseTo(1.5, 9);
    expect(res.metrics.saturatedFraction).toBe(0);
  });

  it("integrates the error measures as rectangle sums", () => {
    // Derived: the definitions ∫|e|, ∫e², ∫t|e| as sums over the returned samples.
    const res = simulateClosedLoop({ plant, controller: pi, samplePeriod: 0.5, duration: 30 });
    let iae = 0;
    let ise = 0;
    let itae = 0;
    res.t.forEach((t, k) => {
      const e = res.r[k] - res.y[k];
      iae += Math.abs(e) * 0.5;
      ise += e * e * 0.5;
      itae += t * Math.abs(e) * 0.5;
    });
    expect(res.metrics.iae).toBeCloseTo(iae, 12);
    expect(res.metrics.ise).toBeCloseTo(ise, 12);
    expect(res.metrics.itae).toBeCloseTo(itae, 10);
  });

  it("rejects a load step at the plant input with integral action", () => {
    const res = simulateClosedLoop({
      plant,
      controller: pi,
      samplePeriod: 0.1,
      duration: 200,
      setpoint: [{ time: 0, value: 0 }],
      loadDisturbance: [{ time: 10, value: 0.5 }],
    });
    expect(res.y[99]).toBe(0);
    expect(Math.max(...res.y)).toBeGreaterThan(0.1);
    expect(Math.abs(res.y[res.y.length - 1])).toBeLessThan(1e-4);
    // Derived: the controller ends up cancelling the load.
    expect(res.u[res.u.length - 1]).toBeCloseTo(-0.5, 4);
    expect(res.metrics.riseTime).toBeNull();
  });

  it("seeded noise is repeatable and has the requested spread", () => {
    const run = (seed: number) =>
      simulateClosedLoop({
        plant,
        controller: { gains: { form: "parallel", kp: 1, ki: 0, kd: 0 } },
        samplePeriod: 0.1,
        duration: 10,
        noise: { standardDeviation: 0.1, seed },
      }).u;
    expect(run(7)).toEqual(run(7));
    expect(run(7)).not.toEqual(run(8));
    const noisy = simulateClosedLoop({
      plant,
      controller: { gains: { form: "parallel", kp: 1, ki: 0, kd: 0 } },
      samplePeriod: 1,
      duration: 20_000,
      setpoint: [{ time: 0, value: 0 }],
      noise: { standardDeviation: 0.1, seed: 3 },
      actuatorLimits: { min: -1e-12, max: 1e-12 },
    });
    // With the actuator pinned, u = −noise: its sample spread must be ≈ 0.1.
    const u = noisy.u;
    const mean = u.reduce((a, b) => a + b, 0) / u.length;
    const sd = Math.sqrt(u.reduce((a, b) => a + (b - mean) ** 2, 0) / u.length);
    expect(Math.abs(mean)).toBeLessThan(0.005);
    expect(Math.abs(sd - 0.1)).toBeLessThan(0.003);
    expect(noisy.metrics.saturatedFraction).toBeGreaterThan(0.99);
  });

  it("metrics of a known sampled second-order response", () => {
    // Derived: sample the closed form of ωn²/(s² + 2ζωn s + ωn²), ζ 0.5, ωn 1 finely.
    const t: number[] = [];
    const r: number[] = [];
    const y: number[] = [];
    const wd = Math.sqrt(0.75);
    for (let k = 0; k <= 30_000; k++) {
      const s = k * 0.001;
      t.push(s);
      r.push(1);
      y.push(1 - Math.exp(-0.5 * s) * (Math.cos(wd * s) + (0.5 / wd) * Math.sin(wd * s)));
    }
    const m = computeSetpointStepMetrics(t, r, y);
    // REFERENCES.md "Closed-form facts" (published): 16.3034 % and settling 8.0764.
    expect(m.overshootPercent).toBeCloseTo(16.3034, 3);
    expect(Math.abs(m.settlingTime! - 8.0764)).toBeLessThan(1e-3);
  });

  it("validates its options with a named field", () => {
    expect(() => simulateClosedLoop({ plant, controller: pi, samplePeriod: -1, duration: 10 })).toThrow(
      expect.objectContaining({ field: "samplePeriod" }),
    );
    expect(() =>
      simulateClosedLoop({ plant, controller: pi, samplePeriod: 1, duration: 10, setpoint: [{ time: Number.NaN, value: 1 }] }),
    ).toThrow(ControlInputError);
  });

  it("a stable PI loop settles at the set point (property)", () => {
    // Derived: integral action removes steady-state error in any stable loop. Conservative PI:
    // lambda rule with λ = θ + τ/2 (well inside the stable range for every FOPDT).
    fc.assert(
      fc.property(
        fc.double({ min: 0.2, max: 5, noNaN: true }),
        fc.double({ min: 0.5, max: 20, noNaN: true }),
        fc.double({ min: 0, max: 5, noNaN: true }),
        fc.double({ min: -10, max: 10, noNaN: true }),
        fc.boolean(),
        (gain, tau, theta, setpoint, negative) => {
          const k = negative ? -gain : gain;
          const lambda = theta + tau / 2;
          const kc = tau / (k * (lambda + theta));
          const h = Math.min(tau, Math.max(theta, 0.5)) / 10;
          const duration = theta + 25 * (lambda + theta);
          const res = simulateClosedLoop({
            plant: { type: "fopdt", gain: k, timeConstant: tau, deadTime: theta },
            controller: { gains: { form: "standard", kc, ti: tau, td: 0 } },
            samplePeriod: h,
            duration,
            setpoint: [{ time: 0, value: setpoint }],
          });
          expect(Math.abs(res.y[res.y.length - 1] - setpoint)).toBeLessThan(1e-4 * Math.max(1, Math.abs(setpoint)));
        },
      ),
      { numRuns: 60 },
    );
  });
});

describe("fused first-order kernel", () => {
  // The kernel (./loop-kernel.ts) must be the stepper's arithmetic, sample for sample, on
  // every input: random plants (either sign of gain), gains, output and actuator limits,
  // anti-windup modes, b in [0, 1], noise, and set-point and load schedules whose steps may
  // lie far beyond the run (sample numbers past 2³¹ included). Diverging loops must stop on
  // the same sample.
  const step = (horizon: number) =>
    fc.record({
      time: fc.oneof(fc.double({ min: 0, max: 3 * horizon, noNaN: true }), fc.double({ min: 1e6, max: 1e12, noNaN: true })),
      value: fc.double({ min: -5, max: 5, noNaN: true }),
    });
  it("matches the sample-by-sample stepper for random first-order loops (property)", () => {
    fc.assert(
      fc.property(
        fc.record({
          plantType: fc.constantFrom("fopdt", "ipdt"),
          gain: fc.double({ min: 0.2, max: 5, noNaN: true }),
          negative: fc.boolean(),
          tau: fc.double({ min: 0.5, max: 20, noNaN: true }),
          theta: fc.double({ min: 0, max: 3, noNaN: true }),
          kc: fc.double({ min: 0.05, max: 8, noNaN: true }),
          ti: fc.double({ min: 0.1, max: 30, noNaN: true }),
          td: fc.double({ min: 0, max: 2, noNaN: true }),
          mode: fc.constantFrom("none", "clamp", "back-calculation"),
          b: fc.double({ min: 0, max: 1, noNaN: true }),
          limits: fc.option(fc.tuple(fc.double({ min: -3, max: 0, noNaN: true }), fc.double({ min: 0.01, max: 3, noNaN: true }))),
          actuator: fc.option(fc.tuple(fc.double({ min: -3, max: 0, noNaN: true }), fc.double({ min: 0.01, max: 3, noNaN: true }))),
          h: fc.double({ min: 0.01, max: 0.5, noNaN: true }),
          setpoint: fc.array(step(40), { maxLength: 4 }),
          load: fc.array(step(40), { maxLength: 3 }),
          noise: fc.boolean(),
        }),
        (p) => {
          const gain = p.negative ? -p.gain : p.gain;
          const options = {
            plant: p.plantType === "fopdt"
              ? ({ type: "fopdt", gain, timeConstant: p.tau, deadTime: p.theta } as const)
              : ({ type: "ipdt", gain: gain / p.tau, deadTime: p.theta } as const),
            controller: {
              gains: { form: "standard", kc: p.negative ? -p.kc : p.kc, ti: p.ti, td: p.td } as const,
              outputLimits: p.limits ? { min: p.limits[0], max: p.limits[1] } : undefined,
              antiWindup: p.mode,
              setpointWeight: p.b,
            },
            actuatorLimits: p.actuator ? { min: p.actuator[0], max: p.actuator[1] } : undefined,
            samplePeriod: p.h,
            duration: 40,
            setpoint: p.setpoint,
            loadDisturbance: p.load,
            noise: p.noise ? { standardDeviation: 0.01, seed: 7 } : undefined,
          };
          const fast = simulateClosedLoop(options);
          const slow = simulateClosedLoop({ ...options, forceStepper: true });
          expect(fast.divergedAt).toBe(slow.divergedAt);
          expect(fast.y.length).toBe(slow.y.length);
          expect(fast.r).toEqual(slow.r);
          for (let k = 0; k < slow.y.length; k++) {
            expect(Math.abs(fast.y[k] - slow.y[k])).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(slow.y[k])));
            expect(Math.abs(fast.u[k] - slow.u[k])).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(slow.u[k])));
          }
          expect(fast.metrics).toEqual(slow.metrics);
        },
      ),
      { numRuns: 60 },
    );
  });

  it("applies a far-future set-point step after the run, not at t = 0 (issue 8, defect 4)", () => {
    // Input: FOPDT K=1, τ=1; PI (1, 1); h = 0.001; 5 s; set point [{0, 1}, {2.2e6, 5}].
    // Derived: the second step is at sample 2.2e9 > 2³¹ − 1, long after the 5001 samples, so
    // r = 1 throughout on both paths (the kernel used to wrap the sample number and start at 5).
    const options = {
      plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 0 } as const,
      controller: { gains: { form: "standard", kc: 1, ti: 1, td: 0 } as const },
      samplePeriod: 0.001,
      duration: 5,
      setpoint: [{ time: 0, value: 1 }, { time: 2.2e6, value: 5 }],
    };
    for (const forceStepper of [false, true]) {
      const { r } = simulateClosedLoop({ ...options, forceStepper });
      expect(r[0]).toBe(1);
      expect(r.every((v) => v === 1)).toBe(true);
    }
  });
});

describe("dead time longer than the run (issue 8, defect 5)", () => {
  // Input: SOPDT θ = 5e5 s at h = 0.01 (θ/h = 5e7) for a 3-sample run; and θ/h = 1e9.
  // Derived: the input reaches the output only after θ, so y = 0 on every sample; the delay
  // line is never longer than the run, so neither allocates more than a few doubles (the old
  // line took 5e7 doubles, 400 MB, and 1e9 doubles, 8 GB).
  it.each([
    { type: "sopdt", gain: 1, timeConstant: 1, timeConstant2: 2, deadTime: 5e5 } as const,
    { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1e7 } as const,
  ])("runs in small memory for $type", (plant) => {
    const before = process.memoryUsage().arrayBuffers;
    const res = simulateClosedLoop({ plant, controller: pi, samplePeriod: 0.01, duration: 0.02 });
    expect(res.y).toEqual([0, 0, 0]);
    expect(process.memoryUsage().arrayBuffers - before).toBeLessThan(10e6);
  });
});

describe("diverging loop (issue 8, defect 6)", () => {
  // Input: FOPDT (1, 1, 1) with parallel PI kp = 5, ki = 1, h = 0.01, 2000 s. Derived: the
  // loop is unstable (kp = 5 > Ku ≈ 2.26 for θ = τ = 1) and grows until it overflows. Running
  // the same arithmetic without the stop, u is first non-finite at sample 110 060 and y at
  // 110 161 (the sample the issue reports); the run stops at the first of them, t = 1100.60 s.
  it("stops at the first non-finite sample and says when, on both paths", () => {
    for (const forceStepper of [false, true]) {
      const res = simulateClosedLoop({
        plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1 },
        controller: { gains: { form: "parallel", kp: 5, ki: 1, kd: 0 } },
        samplePeriod: 0.01,
        duration: 2000,
        forceStepper,
      });
      expect(res.divergedAt).toBeCloseTo(1100.6, 9);
      expect(res.y.length).toBe(110_060);
      expect(res.y.every(Number.isFinite) && res.u.every(Number.isFinite)).toBe(true);
    }
  });

  it("a stable run reports no divergence", () => {
    expect(simulateClosedLoop({ plant, controller: pi, samplePeriod: 0.1, duration: 10 }).divergedAt).toBeNull();
  });
});
