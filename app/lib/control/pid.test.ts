import { describe, expect, it } from "vitest";
import { ControlInputError } from "./errors";
import { createPidController, deriveIntegratorLimits } from "./pid";
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
