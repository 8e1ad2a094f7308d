// The compute API's answers for the corner cases of issue 8 (what /api/v1/compute/* returns).
import { describe, expect, it } from "vitest";
import { ControlInputError } from "~/lib/control";
import { MAX_WORK_UNITS, simulationWork } from "./limits";
import { answerMargins, answerSimulate } from "./run";
import { ControllerSchema } from "./schemas";

describe("margins answer a stability verdict (issue 8, defect 3)", () => {
  // Expected values: app/lib/control/REFERENCES.md "Closed-loop stability" (derived).
  it("FOPDT K=1, τ=1, θ=1 under P kp=5: stable false, Ms null", () => {
    const body = answerMargins({ plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1 }, controller: { form: "parallel", kp: 5, ki: 0, kd: 0 } });
    expect(body.stable).toBe(false);
    expect(body.peakSensitivity).toBeNull();
    expect(body.gainMargin).toBeCloseTo(0.452, 3);
  });

  it("FOPDT K=1, τ=0.01, θ=0, PI Kc=0.5, Ti=0.01 at h=1: stable false, Ms null", () => {
    const body = answerMargins({ plant: { type: "fopdt", gain: 1, timeConstant: 0.01, deadTime: 0 }, controller: { form: "standard", kc: 0.5, ti: 0.01, td: 0 }, samplePeriod: 1 });
    expect(body.stable).toBe(false);
    expect(body.peakSensitivity).toBeNull();
  });

  it("2(s+2)²/s³ under P=1: stable true with GM 0.5 and Ms ≥ 1", () => {
    const body = answerMargins({ plant: { type: "tf", numerator: [2, 8, 8], denominator: [1, 0, 0, 0] }, controller: { form: "parallel", kp: 1, ki: 0, kd: 0 } });
    expect(body.stable).toBe(true);
    expect(body.gainMargin).toBeCloseTo(0.5, 6);
    expect(body.peakSensitivity!).toBeGreaterThanOrEqual(1);
  });
});

describe("simulate answers a diverged flag (issue 8, defect 6)", () => {
  it("FOPDT (1, 1, 1), PI kp=5, ki=1, h=0.01, 2000 s: diverged at 1100.60 s", () => {
    // Derived in app/lib/control/simulate.test.ts: u is first non-finite at sample 110 060.
    const body = answerSimulate({ plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1 }, controller: { form: "parallel", kp: 5, ki: 1, kd: 0 }, samplePeriod: 0.01, duration: 2000 });
    expect(body.diverged).toBe(true);
    expect(body.divergedAt).toBeCloseTo(1100.6, 9);
    expect(body.y).toHaveLength(110_060);
  });

  it("a stable run says diverged false", () => {
    const body = answerSimulate({ plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 0.1 }, controller: { form: "standard", kc: 1, ti: 1, td: 0 }, samplePeriod: 0.1, duration: 10 });
    expect(body.diverged).toBe(false);
    expect(body.divergedAt).toBeNull();
  });
});

describe("work limits (issue 8, defect 5)", () => {
  const tooLarge = (run: () => unknown) => {
    try {
      run();
    } catch (error) {
      return error instanceof ControlInputError ? error.code : "other";
    }
    return "none";
  };

  it("refuses 200 000 samples of an order-20 plant but not of an FOPDT", () => {
    // Derived from the cost model (limits.ts): order 20 costs 400 + 40 + 10 = 450 units a
    // sample, 200 001·450 = 9.0·10⁷ > 6·10⁷; an FOPDT costs 13, 200 001·13 = 2.6·10⁶.
    const denominator = new Array(21).fill(0);
    denominator[0] = 1;
    denominator[20] = 1;
    const plant = { type: "tf" as const, numerator: [1], denominator };
    expect(simulationWork({ plant, samplePeriod: 0.01, duration: 2000 })).toBe(200_001 * 450);
    expect(simulationWork({ plant, samplePeriod: 0.01, duration: 2000 })).toBeGreaterThan(MAX_WORK_UNITS);
    expect(tooLarge(() => answerSimulate({ plant, controller: { form: "parallel", kp: 0.01, ki: 0, kd: 0 }, samplePeriod: 0.01, duration: 2000 }))).toBe("too_large");
    const fopdt = { type: "fopdt" as const, gain: 1, timeConstant: 1, deadTime: 0.5 };
    expect(simulationWork({ plant: fopdt, samplePeriod: 0.01, duration: 2000 })).toBe(200_001 * 13);
    expect(tooLarge(() => answerSimulate({ plant: fopdt, controller: { form: "parallel", kp: 0.5, ki: 0.5, kd: 0 }, samplePeriod: 0.01, duration: 2000 }))).toBe("none");
  });

  it("refuses a stability check of a delay line of θ/h = 10⁹ samples", () => {
    // Input from the issue: θ/h = 1e9, which the schema allows.
    const run = () => answerMargins({ plant: { type: "sopdt", gain: 1, timeConstants: [1, 2], deadTime: 1e7 }, controller: { form: "parallel", kp: 1, ki: 0, kd: 0 }, samplePeriod: 0.01 });
    expect(tooLarge(run)).toBe("too_large");
  });
});

describe("parallel gains follow the sign convention (issue 8, defect 9)", () => {
  it("accepts a reverse-acting parallel controller and refuses mixed signs", () => {
    // Derived: Kc = −2, Ti = 4, Td = 0.5 in parallel form is kp −2, ki −0.5, kd −1.
    expect(ControllerSchema.safeParse({ form: "parallel", kp: -2, ki: -0.5, kd: -1 }).success).toBe(true);
    const mixed = ControllerSchema.safeParse({ form: "parallel", kp: -2, ki: 0.5, kd: 0 });
    expect(mixed.success).toBe(false);
    expect(mixed.error?.issues[0].path).toEqual(["ki"]);
  });
});

describe("hostile values get a clear 400, not a hang", () => {
  it("refuses coefficients that overflow the stability check", () => {
    // 1e308/1e-308 overflows to Infinity once the denominator is made monic.
    expect(() => answerMargins({ plant: { type: "tf", numerator: [1e308], denominator: [1e-308, 1] }, controller: { form: "parallel", kp: 1, ki: 0.1, kd: 0 } })).toThrow(ControlInputError);
    expect(() => answerMargins({ plant: { type: "fopdt", gain: 1, timeConstant: 1e-300, deadTime: 1 }, controller: { form: "parallel", kp: 1, ki: 0.1, kd: 0 } })).toThrow(ControlInputError);
  });
});
