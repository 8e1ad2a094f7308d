import { describe, expect, it } from "vitest";
import { ControlInputError } from "./errors";
import fc from "fast-check";
import { createPidController, deriveIntegratorLimits, resolveTrackingTime } from "./pid";
import { simulateClosedLoop } from "./simulate";

// REFERENCES.md "Discrete PID with anti-windup" (derived from the published update order):
// plant 1/(s+1), ZOH h = 0.1, standard-form PI K = 2, Ti = 1, unit step, u ∈ [0, 1.2].
function runTrace(antiWindup: "none" | "clamp" | "back-calculation") {
  return simulateClosedLoop({
    plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 0 },
    samplePeriod: 0.1,
    duration: 8,
    controller: { gains: { form: "standard", kc: 2, ti: 1, td: 0 }, outputLimits: { min: 0, max: 1.2 }, antiWindup },
  });
}

function peakOf(y: number[]): { value: number; index: number } {
  let index = 0;
  for (let k = 1; k < y.length; k++) if (y[k] > y[index]) index = k;
  return { value: y[index], index };
}

describe("anti-windup trace", () => {
  const expected = [0.114195, 0.217523, 0.311018, 0.395616];

  it.each(["none", "clamp", "back-calculation"] as const)("y[1..4] in mode %s", (mode) => {
    // REFERENCES.md "Discrete PID with anti-windup" (derived): same first samples in every mode.
    const { y } = runTrace(mode);
    for (let k = 0; k < 4; k++) expect(y[k + 1]).toBeCloseTo(expected[k], 6);
  });

  it("no anti-windup overshoots to 1.098681 at k = 26", () => {
    // REFERENCES.md "Discrete PID with anti-windup" (derived).
    const peak = peakOf(runTrace("none").y);
    expect(peak.value).toBeCloseTo(1.098681, 6);
    expect(peak.index).toBe(26);
  });

  it("back-calculation peaks at 1.001766 at k = 35", () => {
    // REFERENCES.md "Discrete PID with anti-windup" (derived), Tt = Ti for PI.
    const peak = peakOf(runTrace("back-calculation").y);
    expect(peak.value).toBeCloseTo(1.001766, 6);
    expect(peak.index).toBe(35);
  });

  it("clamping does not overshoot in the first 60 samples and y[8] = 0.621929", () => {
    // REFERENCES.md "Discrete PID with anti-windup" (derived).
    const { y, metrics } = runTrace("clamp");
    expect(Math.max(...y.slice(0, 61))).toBeLessThan(1);
    expect(y[8]).toBeCloseTo(0.621929, 6);
    expect(metrics.integratorHeldFraction).toBeGreaterThan(0);
  });
});

describe("integrator limits from the output range", () => {
  it("8-bit drive output, gain after and before the state", () => {
    // REFERENCES.md "Integrator limits" (practice): after → outMax/ki, outMin/ki; before → output limits.
    const out = { min: 0, max: 255 };
    expect(deriveIntegratorLimits(out, 0.5, "after")).toEqual({ min: 0, max: 510 });
    expect(deriveIntegratorLimits(out, 0.5, "before")).toEqual({ min: 0, max: 255 });
    // Derived: a reverse-acting controller (ki < 0) swaps the bounds.
    expect(deriveIntegratorLimits(out, -0.5, "after")).toEqual({ min: -510, max: 0 });
  });

  it("both placements give the same loop", () => {
    // Derived: ki·Σh·e = Σki·h·e, so only rounding may differ.
    const run = (integralPlacement: "before" | "after") =>
      simulateClosedLoop({
        plant: { type: "fopdt", gain: 1.5, timeConstant: 4, deadTime: 0.7 },
        samplePeriod: 0.1,
        duration: 40,
        setpoint: [{ time: 0, value: 200 }],
        controller: {
          gains: { form: "parallel", kp: 0.8, ki: 0.2, kd: 0.5 },
          outputLimits: { min: 0, max: 255 },
          antiWindup: "back-calculation",
          integralPlacement,
        },
      }).y;
    const a = run("before");
    const b = run("after");
    for (let k = 0; k < a.length; k++) expect(Math.abs(a[k] - b[k])).toBeLessThan(1e-9);
  });
});

describe("controller stepper", () => {
  it("derivative on measurement with the standard-form filter coefficients", () => {
    // REFERENCES.md "Discrete PID" (published order): ad = Td/(Td + N h), bd = K N ad.
    const [kc, td, n, h] = [2, 0.5, 10, 0.1];
    const c = createPidController({
      gains: { form: "standard", kc, ti: null, td },
      samplePeriod: h,
      derivativeFilter: { n },
    });
    const ad = td / (td + n * h);
    const bd = kc * n * ad;
    expect(c.step(0, 0)).toBe(0);
    // A measurement step of +1: D = −bd, P = −kc.
    expect(c.step(0, 1)).toBeCloseTo(-kc - bd, 12);
    // Held measurement: D decays by ad.
    expect(c.step(0, 1)).toBeCloseTo(-kc - ad * bd, 12);
  });

  it("set-point changes do not kick the derivative; weight b scales P", () => {
    const c = createPidController({
      gains: { form: "parallel", kp: 1, ki: 0, kd: 5 },
      samplePeriod: 0.1,
      setpointWeight: 0.5,
      derivativeFilter: "none",
    });
    c.step(0, 0);
    expect(c.step(1, 0)).toBeCloseTo(0.5, 12);
  });

  it("unfiltered derivative is the plain difference kd(y − y_prev)/h", () => {
    const c = createPidController({ gains: { form: "parallel", kp: 0, ki: 0, kd: 3 }, samplePeriod: 0.2, derivativeFilter: "none" });
    c.step(0, 1);
    expect(c.step(0, 1.5)).toBeCloseTo((-3 * 0.5) / 0.2, 12);
  });

  it("reports saturation and a held integrator", () => {
    const c = createPidController({
      gains: { form: "standard", kc: 10, ti: 1, td: 0 },
      samplePeriod: 0.1,
      outputLimits: { min: -1, max: 1 },
      antiWindup: "clamp",
    });
    expect(c.step(1, 0)).toBe(1);
    expect(c.saturatedHigh).toBe(true);
    expect(c.saturatedLow).toBe(false);
    expect(c.integratorHeld).toBe(true);
    expect(c.integral).toBe(0);
    expect(c.step(-1, 0)).toBe(-1);
    expect(c.saturatedLow).toBe(true);
  });

  it("validates its configuration with a named field", () => {
    const bad = () =>
      createPidController({ gains: { form: "parallel", kp: 1, ki: 1, kd: 0 }, samplePeriod: 0, outputLimits: { min: 0, max: 1 } });
    expect(bad).toThrow(ControlInputError);
    try {
      createPidController({ gains: { form: "parallel", kp: 1, ki: 1, kd: 0 }, samplePeriod: 1, outputLimits: { min: 1, max: 0 } });
    } catch (error) {
      expect((error as ControlInputError).field).toBe("outputLimits.max");
    }
  });
});

describe("integrator bounds with set-point weight (issue 8, defect 1)", () => {
  // Input: FOPDT K=1, τ=1, θ=0; standard PI Kc=2, Ti=1; output limits [0, 1]; b=0; r=0.8;
  // h=0.1; 60 s. Derived (REFERENCES.md "Integrator bounds"): u* = y* = r = 0.8 lies inside
  // the limits, so integral action must bring y to 0.8; there I = u* − Kc(b·r − y*) = 2.4,
  // outside [0, 1], which the old bound on I alone could not reach (y stalled at 1/3).
  it.each(["none", "clamp", "back-calculation"] as const)("y reaches r = 0.8 in mode %s, on both simulation paths", (antiWindup) => {
    for (const forceStepper of [false, true]) {
      const { y } = simulateClosedLoop({
        plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 0 },
        controller: { gains: { form: "standard", kc: 2, ti: 1, td: 0 }, outputLimits: { min: 0, max: 1 }, antiWindup, setpointWeight: 0 },
        samplePeriod: 0.1,
        duration: 60,
        setpoint: [{ time: 0, value: 0.8 }],
        forceStepper,
      });
      expect(y[y.length - 1]).toBeCloseTo(0.8, 9);
    }
  });

  it("the integral settles at u* − Kc(b·r − y*) = 2.4", () => {
    // Derived as above, with the plant stepped by hand (y⁺ = a·y + (1 − a)·u, a = e^(−0.1)).
    const pid = createPidController({
      gains: { form: "standard", kc: 2, ti: 1, td: 0 },
      samplePeriod: 0.1,
      outputLimits: { min: 0, max: 1 },
      antiWindup: "clamp",
      setpointWeight: 0,
    });
    const a = Math.exp(-0.1);
    let y = 0;
    for (let k = 0; k < 600; k++) y = a * y + (1 - a) * pid.step(0.8, y);
    expect(pid.integral).toBeCloseTo(2.4, 9);
    expect(pid.u).toBeCloseTo(0.8, 9);
  });
});

describe("back-calculation tracking gain (issue 8, defect 2)", () => {
  // Input: Kc=1, Ti=1, Td=1e-4, h=0.1, limits ±1, initial integral 0.9, constant error 1.5
  // (r = 1.5, y = 0). Derived (REFERENCES.md "Back-calculation"): while saturated the
  // integrator follows I⁺ − I* = (1 − g)(I − I*) with g = min(1, h/Tt); g = 1 reaches
  // I* = uMax − P + ki·h·e = 1 − 1.5 + 0.15 = −0.35 in one sample, where v = 1.15 stays
  // above the limit, so u = 1.000 on every sample (the old g = h/Tt = 10 gave
  // 1.000, 0.500, 0.650, 0.800, 0.950, 1.000).
  it.each([undefined, 0.01])("u stays at the limit with Tt = %s", (trackingTime) => {
    const pid = createPidController({
      gains: { form: "standard", kc: 1, ti: 1, td: 1e-4 },
      samplePeriod: 0.1,
      outputLimits: { min: -1, max: 1 },
      antiWindup: "back-calculation",
      trackingTime,
      initialIntegral: 0.9,
    });
    const u = Array.from({ length: 6 }, () => pid.step(1.5, 0));
    expect(u).toEqual([1, 1, 1, 1, 1, 1]);
    expect(pid.integral).toBeCloseTo(-0.35, 12);
  });

  it("the default Tt is never below h", () => {
    // Derived: √(Ti·Td) = √(1·1e-4) = 0.01 < h = 0.1, so the default becomes h.
    expect(resolveTrackingTime({ kp: 1, ki: 1, kd: 1e-4 }, undefined, 0.1)).toBe(0.1);
    expect(resolveTrackingTime({ kp: 1, ki: 1, kd: 1e-4 }, undefined)).toBeCloseTo(0.01, 15);
  });

  it("the distance to I* never grows while saturated, for any h/Tt (property)", () => {
    // Derived: |1 − g| ≤ 1 for g = min(1, h/Tt) ∈ (0, 1].
    fc.assert(
      fc.property(fc.double({ min: 1e-3, max: 1e3, noNaN: true }), fc.double({ min: 0.1, max: 5, noNaN: true }), (ratio, error) => {
        const h = 0.1;
        const pid = createPidController({
          gains: { form: "parallel", kp: 1, ki: 1, kd: 0 },
          samplePeriod: h,
          outputLimits: { min: -1, max: 1 },
          antiWindup: "back-calculation",
          trackingTime: h / ratio,
          initialIntegral: 0.9,
        });
        // Fixed point of I⁺ = I + ki·h·e + g(uMax − P − I): I* = uMax − P + ki·h·e/g, held
        // inside the integrator's bound uMax (P > 0 here).
        const g = Math.min(1, ratio);
        const target = Math.min(1, 1 - error + (h * error) / g);
        let distance = Math.abs(0.9 - target);
        for (let k = 0; k < 20; k++) {
          expect(pid.step(error, 0)).toBe(1);
          const next = Math.abs(pid.integral - target);
          expect(next).toBeLessThanOrEqual(distance + 1e-12);
          distance = next;
        }
      }),
      { numRuns: 200 },
    );
  });
});

describe("bumpless gain change (issue 8, defect 8)", () => {
  // Åström & Hägglund 1995, "bumpless parameter changes" (memory; REFERENCES.md): move the
  // integral by P_old − P_new (and D_old − D_new) so v is unchanged at the switch.
  it("kp 6.25 → 20 leaves the output where it was", () => {
    const pid = createPidController({
      gains: { form: "parallel", kp: 6.25, ki: 0.039, kd: 0 },
      samplePeriod: 1,
      outputLimits: { min: 0, max: 255 },
      antiWindup: "clamp",
      initialIntegral: 157,
    });
    let u = 0;
    for (let k = 0; k < 5; k++) u = pid.step(215, 214.9);
    pid.setGains({ form: "parallel", kp: 20, ki: 0.039, kd: 0 });
    // Derived: same r and y after the switch, so v moves only by the new ki·h·e = 0.039·0.1.
    const after = pid.step(215, 214.9);
    expect(after - u).toBeCloseTo(0.039 * 0.1, 9);
    expect(pid.gains).toEqual({ kp: 20, ki: 0.039, kd: 0 });
  });

  it("with derivative action the derivative state is rescaled and the rest goes to I", () => {
    // kp 2, ki 0.5, kd 1, h 0.1, N 10: Tf = kd/(kp·N) = 0.05, ad = 1/3, bd = kd/(Tf + h) = 6.6667.
    const pid = createPidController({ gains: { form: "parallel", kp: 2, ki: 0.5, kd: 1 }, samplePeriod: 0.1 });
    pid.step(1, 0);
    pid.step(1, 0.2);
    const before = pid.unlimitedOutput;
    pid.setGains({ form: "parallel", kp: 4, ki: 0.5, kd: 3 });
    // Derived: D = −bd·0.2 = −4/3 becomes D·(3/1) = −4; the switch keeps v, and the next
    // sample at the same r, y only lets D decay: v⁺ = v + (ad_new − 1)·D_new with
    // ad_new = 0.075/0.175 = 3/7, i.e. v + (4/7)·4 = v + 2.285714, plus the last sample's
    // integral step ki·h·e = 0.5·0.1·0.8 = 0.04 that the old gains had already taken.
    const next = pid.step(1, 0.2);
    expect(next - before).toBeCloseTo(16 / 7 + 0.04, 9);
  });
});
