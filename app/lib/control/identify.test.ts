import { describe, expect, it } from "vitest";
import { ControlInputError } from "./errors";
import { fitFopdt, identifyTwoPoint, type StepTestData } from "./identify";
import { createRandomSource } from "./random";

/** Exact FOPDT step data: u steps 0 → du at t = 0, y = y0 + K·du·(1 − e^{−(t−θ)/τ}) after θ. */
interface StepArrays extends StepTestData {
  t: number[];
  u: number[];
  y: number[];
}

function fopdtStepData(
  times: number[],
  k: number,
  tau: number,
  theta: number,
  options: { y0?: number; du?: number; noise?: number } = {},
): StepArrays {
  const { y0 = 0, du = 1, noise = 0 } = options;
  const random = createRandomSource(42);
  const u = times.map((t) => (t >= 0 ? du : 0));
  const y = times.map((t) => {
    const s = t - theta;
    const clean = y0 + (s > 0 ? k * du * (1 - Math.exp(-s / tau)) : 0);
    return clean + noise * random.nextNormal();
  });
  return { t: times, u, y };
}

function evenTimes(start: number, end: number, h: number): number[] {
  const out: number[] = [];
  for (let k = 0; start + k * h <= end + 1e-9; k++) out.push(start + k * h);
  return out;
}

const within = (actual: number, expected: number, relative: number) =>
  expect(Math.abs(actual - expected) / Math.abs(expected)).toBeLessThan(relative);

describe("two-point identification", () => {
  const data = fopdtStepData(evenTimes(-5, 200, 0.01), 2, 10, 2);

  it("Smith on exact FOPDT K=2, τ=10, θ=2 → (10.0049, 1.9918)", () => {
    // REFERENCES.md "Smith 1972" (memory for the constants; derived check).
    const { model } = identifyTwoPoint(data, "smith");
    expect(model.gain).toBeCloseTo(2, 6);
    expect(model.timeConstant).toBeCloseTo(10.0049, 3);
    expect(model.deadTime).toBeCloseTo(1.9918, 3);
  });

  it("Sundaresan–Krishnaswamy on the same data → (9.9288, 2.1201)", () => {
    // REFERENCES.md "Sundaresan & Krishnaswamy 1978" (memory for the constants; derived check).
    const { model } = identifyTwoPoint(data, "sundaresan-krishnaswamy");
    expect(model.timeConstant).toBeCloseTo(9.9288, 3);
    expect(model.deadTime).toBeCloseTo(2.1201, 3);
  });
});

describe("least-squares FOPDT fit", () => {
  it("recovers K, τ, θ within 1 % from exact data", () => {
    // REFERENCES.md "Identification from a step test" (published requirement: within 1 %).
    const result = fitFopdt(fopdtStepData(evenTimes(-5, 80, 0.1), 2, 10, 2, { y0: 3, du: 0.5 }));
    within(result.model.gain, 2, 0.01);
    within(result.model.timeConstant, 10, 0.01);
    within(result.model.deadTime, 2, 0.01);
    // Exact data: the fit is far tighter than the requirement.
    within(result.model.deadTime, 2, 1e-6);
    expect(result.fit.r2).toBeGreaterThan(0.999999);
    expect(result.baseline).toBeCloseTo(3, 6);
  });

  it("recovers them from unevenly sampled data", () => {
    // REFERENCES.md "Identification from a step test" (published requirement), uneven grid.
    const random = createRandomSource(9);
    const times = [-3, -1.3, 0];
    while (times[times.length - 1] < 70) times.push(times[times.length - 1] + 0.05 + 0.6 * random.nextUniform());
    const result = fitFopdt(fopdtStepData(times, -1.5, 7, 3.3));
    within(result.model.gain, -1.5, 0.01);
    within(result.model.timeConstant, 7, 0.01);
    within(result.model.deadTime, 3.3, 0.01);
    within(result.model.timeConstant, 7, 1e-6);
  });

  it("recovers them with small measurement noise", () => {
    // REFERENCES.md "Identification from a step test" (published requirement), noise 0.25 % of Δy.
    // (At 1 % noise and 1 100 samples the θ estimate's own scatter is already about 1 %.)
    const result = fitFopdt(fopdtStepData(evenTimes(-10, 100, 0.1), 2, 10, 2, { noise: 0.005 }));
    within(result.model.gain, 2, 0.01);
    within(result.model.timeConstant, 10, 0.01);
    within(result.model.deadTime, 2, 0.01);
    expect(result.fit.rmse).toBeCloseTo(0.005, 3);
  });

  // Its speed (target < 200 ms) is measured by `npm run bench`, not asserted here.
  it("fits a 10 000-sample noisy step test", () => {
    const data = fopdtStepData(evenTimes(-10, 989.9, 0.1), 2, 50, 7.3, { noise: 0.01 });
    expect(data.t.length).toBe(10_000);
    const result = fitFopdt(data);
    within(result.model.timeConstant, 50, 0.01);
  });
});

describe("step-test validation", () => {
  const good = fopdtStepData(evenTimes(-1, 50, 0.5), 1, 5, 1);
  const fieldOf = (data: StepTestData): string => {
    try {
      fitFopdt(data);
    } catch (error) {
      expect(error).toBeInstanceOf(ControlInputError);
      return (error as ControlInputError).field;
    }
    return "";
  };

  it("refuses bad data with a reason and a field", () => {
    expect(fieldOf({ ...good, u: good.u.map(() => 1) })).toBe("u");
    expect(fieldOf({ t: [0, 1, 2], u: [0, 1, 1], y: [0, 0.5, 0.8] })).toBe("t");
    const backwards = [...good.t];
    [backwards[5], backwards[6]] = [backwards[6], backwards[5]];
    expect(fieldOf({ ...good, t: backwards })).toBe("t");
    const withNaN = [...good.y];
    withNaN[10] = Number.NaN;
    expect(fieldOf({ ...good, y: withNaN })).toBe("y");
    expect(fieldOf({ ...good, y: good.y.slice(1) })).toBe("y");
    expect(fieldOf({ ...good, y: good.y.map(() => 2) })).toBe("y");
    expect(() => identifyTwoPoint({ ...good, u: good.u.map(() => 0) }, "smith")).toThrow(/no step/);
  });
});

describe("two-point methods on noisy data (issue 8, defect 9)", () => {
  // Input: FOPDT K=1, τ=10, θ=2, step at t = 5 s, h = 0.1 s, 105 s, Gaussian noise σ = 0.1
  // (10 % of the step), seeds 1–5. Expected: the model itself, τ = 10, θ = 2 (Smith's rounded
  // constants give 10.0049, 1.9918 on exact data: REFERENCES.md "Identification on noisy
  // data"), within the spread the noise leaves after smoothing: τ within 20 %, θ within
  // 0.8 s (the least-squares fit itself lands 0.2 s off θ on seed 2). Reading the raw first crossing gave τ from 4.4 to 12.5 and θ from 0 to 3.5 on
  // these seeds.
  const noisy = (seed: number) => {
    const random = createRandomSource(seed);
    const t: number[] = [];
    const u: number[] = [];
    const y: number[] = [];
    for (let k = 0; k <= 1050; k++) {
      const time = k * 0.1;
      const since = time - 5;
      t.push(time);
      u.push(since >= 0 ? 1 : 0);
      y.push((since > 2 ? 1 - Math.exp(-(since - 2) / 10) : 0) + 0.1 * random.nextNormal());
    }
    return { t, u, y };
  };

  it.each([1, 2, 3, 4, 5])("Smith and Sundaresan–Krishnaswamy land near τ = 10, θ = 2 (seed %i)", (seed) => {
    for (const method of ["smith", "sundaresan-krishnaswamy"] as const) {
      const { model } = identifyTwoPoint(noisy(seed), method);
      expect(Math.abs(model.timeConstant - 10)).toBeLessThan(2);
      expect(Math.abs(model.deadTime - 2)).toBeLessThan(0.8);
    }
  });
});
