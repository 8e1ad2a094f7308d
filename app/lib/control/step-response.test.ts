import { describe, expect, it } from "vitest";
import { computeStepResponse, defaultStepDuration } from "./step-response";

const secondOrder = (zeta: number, wn: number) => ({
  type: "tf" as const,
  numerator: [wn * wn],
  denominator: [1, 2 * zeta * wn, wn * wn],
});

describe("open-loop step response", () => {
  it.each([
    [0.5, 16.3034],
    [0.6, 9.478],
    [0.7, 4.5988],
  ])("second-order overshoot at ζ = %s is %s %%", (zeta, percent) => {
    // REFERENCES.md "Closed-form facts" (published): overshoot exp(−ζπ/√(1−ζ²)).
    const { info } = computeStepResponse(secondOrder(zeta, 1));
    expect(info.overshootPercent).toBeCloseTo(percent, 3);
    expect(info.overshootPercent).toBeCloseTo(100 * Math.exp((-zeta * Math.PI) / Math.sqrt(1 - zeta * zeta)), 8);
  });

  it("peak time π/(ωn√(1−ζ²)) and exact 2 % settling time at ζ 0.5, ωn 1", () => {
    // REFERENCES.md "Closed-form facts" (published): peak time 3.627599, settling 8.0764,
    // about 1 % away from the 4/(ζωn) = 8 estimate.
    const { info } = computeStepResponse(secondOrder(0.5, 1));
    expect(info.peakTime).toBeCloseTo(3.627599, 6);
    // The exact root is 8.076349 (bisection on the closed form); the reference rounds it to 8.0764.
    expect(Math.abs(info.settlingTime! - 8.0764)).toBeLessThan(1e-4);
    expect(info.settlingTime).toBeCloseTo(8.076349, 6);
    expect(Math.abs(info.settlingTime! - 8) / 8).toBeLessThan(0.011);
    expect(info.steadyState).toBeCloseTo(1, 12);
    expect(info.peak).toBeCloseTo(1.163034, 6);
  });

  it("FOPDT rise time τ·ln 9 and settling θ + τ·ln 50", () => {
    // Derived from y = K(1 − e^(−(t−θ)/τ)): t10→t90 = τ ln 9; |y − K| = 2 % K at t = θ + τ ln 50.
    const { info } = computeStepResponse({ type: "fopdt", gain: 2, timeConstant: 10, deadTime: 2 });
    expect(info.riseTime).toBeCloseTo(10 * Math.log(9), 8);
    expect(info.settlingTime).toBeCloseTo(2 + 10 * Math.log(50), 8);
    expect(info.overshootPercent).toBe(0);
    expect(info.steadyState).toBeCloseTo(2, 12);
  });

  it("an integrating plant has no steady state", () => {
    const { info, t } = computeStepResponse({ type: "ipdt", gain: 0.5, deadTime: 2 });
    expect(info.steadyState).toBeNull();
    expect(info.settlingTime).toBeNull();
    // Derived: the ramp 0.5(t − θ) peaks at the window end.
    expect(info.peak).toBeCloseTo(0.5 * (t[t.length - 1] - 2), 9);
  });

  it("the default window covers the settling", () => {
    const plant = { type: "sopdt" as const, gain: 1, timeConstant: 20, timeConstant2: 3, deadTime: 4 };
    expect(defaultStepDuration(plant)).toBeCloseTo(4 + 200, 6);
    expect(computeStepResponse(plant).info.settlingTime).not.toBeNull();
  });
});
