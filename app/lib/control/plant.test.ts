import { describe, expect, it } from "vitest";
import { ControlInputError } from "./errors";
import { createPlantSimulator, discretisePlant, toTransferFunction, type PlantModel } from "./plant";
import { createExactStepEvaluator } from "./step-response";

function stepSamples(plant: PlantModel, h: number, count: number): number[] {
  const sim = createPlantSimulator(discretisePlant(plant, h));
  const y: number[] = [];
  for (let k = 0; k < count; k++) {
    y.push(sim.output());
    sim.advance(1);
  }
  return y;
}

describe("zero-order-hold discretisation", () => {
  it("first order: a = e^(−h/τ), b = K(1 − a)", () => {
    // REFERENCES.md "Closed-form facts" (published): K = 2, τ = 5, h = 0.5 → a = 0.904837418, b = 0.190325164.
    const d = discretisePlant({ type: "fopdt", gain: 2, timeConstant: 5, deadTime: 0 }, 0.5);
    const a = d.phi[0];
    const b = d.c[0] * d.gammaLate[0];
    expect(a).toBeCloseTo(0.904837418, 9);
    expect(b).toBeCloseTo(0.190325164, 9);
  });

  it("unit-step samples equal K(1 − e^(−kh/τ))", () => {
    // REFERENCES.md "Closed-form facts" (published).
    const y = stepSamples({ type: "fopdt", gain: 2, timeConstant: 5, deadTime: 0 }, 0.5, 40);
    for (let k = 0; k < 40; k++) expect(y[k]).toBeCloseTo(2 * (1 - Math.exp((-k * 0.5) / 5)), 12);
  });

  it("whole-sample dead time delays the samples exactly", () => {
    // Derived from the same formula shifted by θ = 3h.
    const y = stepSamples({ type: "fopdt", gain: 2, timeConstant: 5, deadTime: 1.5 }, 0.5, 40);
    for (let k = 0; k < 40; k++) {
      const s = k * 0.5 - 1.5;
      expect(y[k]).toBeCloseTo(s <= 0 ? 0 : 2 * (1 - Math.exp(-s / 5)), 12);
    }
  });

  it.each<[string, PlantModel]>([
    ["fopdt", { type: "fopdt", gain: 2, timeConstant: 5, deadTime: 1.37 }],
    ["sopdt", { type: "sopdt", gain: 1.5, timeConstant: 3, timeConstant2: 0.8, deadTime: 0.23 }],
    ["underdamped tf", { type: "tf", numerator: [2, 1], denominator: [1, 0.6, 4], deadTime: 0.77 }],
    ["ipdt", { type: "ipdt", gain: 0.3, deadTime: 0.61 }],
    ["biproper tf", { type: "tf", numerator: [3, 1], denominator: [1, 2], deadTime: 0.45 }],
  ])("fractional dead time is exact at the samples (%s)", (_, plant) => {
    // Derived: a step is piecewise constant, so ZOH samples must equal the continuous
    // response at t = kh (taken just before the sample, i.e. the left limit).
    const h = 0.2;
    const y = stepSamples(plant, h, 100);
    const exact = createExactStepEvaluator(plant);
    for (let k = 0; k < 100; k++) expect(y[k]).toBeCloseTo(exact(k * h - 1e-12).y, 9);
  });
});

describe("plant validation", () => {
  const fieldOf = (plant: unknown): string => {
    try {
      toTransferFunction(plant as PlantModel);
    } catch (error) {
      expect(error).toBeInstanceOf(ControlInputError);
      return (error as ControlInputError).field;
    }
    return "";
  };

  it("names the offending field", () => {
    expect(fieldOf({ type: "fopdt", gain: 1, timeConstant: 0, deadTime: 1 })).toBe("plant.timeConstant");
    expect(fieldOf({ type: "fopdt", gain: 1, timeConstant: 2, deadTime: -1 })).toBe("plant.deadTime");
    expect(fieldOf({ type: "fopdt", gain: Number.NaN, timeConstant: 2, deadTime: 1 })).toBe("plant.gain");
    expect(fieldOf({ type: "sopdt", gain: 1, timeConstant: 2, timeConstant2: -1, deadTime: 1 })).toBe("plant.timeConstant2");
    expect(fieldOf({ type: "tf", numerator: [1, 2, 3], denominator: [1, 1] })).toBe("plant.numerator");
    expect(fieldOf({ type: "tf", numerator: [1], denominator: [1, Infinity] })).toBe("plant.denominator[1]");
    expect(fieldOf({ type: "tf", numerator: [1], denominator: [] })).toBe("plant.denominator");
    expect(fieldOf({ type: "pid" })).toBe("plant.type");
  });

  it("accepts leading zeros in tf coefficients", () => {
    const tf = toTransferFunction({ type: "tf", numerator: [0, 0, 2], denominator: [0, 4, 2] });
    expect(tf.numerator).toEqual([0.5]);
    expect(tf.denominator).toEqual([1, 0.5]);
  });
});
