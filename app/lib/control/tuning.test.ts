import { describe, expect, it } from "vitest";
import { ControlInputError } from "./errors";
import type { StandardGains } from "./forms";
import { computeUltimatePoint } from "./frequency";
import { proposeAllTunings, proposeTuning, type TuningRequest } from "./tuning";

const fopdt = { type: "fopdt" as const, gain: 2, timeConstant: 10, deadTime: 2 };

function expectStandard(actual: StandardGains, kc: number, ti: number | null, td: number, digits = 4) {
  expect(actual.kc).toBeCloseTo(kc, digits);
  if (ti === null) expect(actual.ti).toBeNull();
  else expect(actual.ti).toBeCloseTo(ti, digits);
  expect(actual.td).toBeCloseTo(td, digits);
}

function expectRelative(actual: number | null, expected: number, tolerance: number) {
  expect(actual).not.toBeNull();
  expect(Math.abs(actual! - expected) / Math.abs(expected)).toBeLessThan(tolerance);
}

describe("Ziegler–Nichols ultimate cycle (standard form)", () => {
  const plant = { type: "tf" as const, numerator: [1], denominator: [1, 3, 3, 1] };

  it("Ku and Pu of 1/(s+1)^3 come out of the margins code", () => {
    // REFERENCES.md "Ziegler & Nichols 1942" (derived): ωu = √3, Ku = 8, Pu = 2π/√3 = 3.627599.
    const point = computeUltimatePoint(plant)!;
    expect(point.ultimateGain).toBeCloseTo(8, 9);
    expect(point.ultimateFrequency).toBeCloseTo(Math.sqrt(3), 9);
    expect(point.ultimatePeriod).toBeCloseTo(3.627599, 6);
  });

  it("PID 4.8, 1.8138, 0.4534 from the plant and from Ku, Pu", () => {
    // REFERENCES.md "Ziegler & Nichols 1942" (memory for the table; derived check): PID 0.6Ku, Pu/2, Pu/8.
    const fromModel = proposeTuning({ rule: "ziegler-nichols", controller: "PID", model: plant });
    expectStandard(fromModel.standard, 4.8, 1.8138, 0.4534);
    const fromPoint = proposeTuning({
      rule: "ziegler-nichols",
      controller: "PID",
      ultimate: { gain: 8, period: (2 * Math.PI) / Math.sqrt(3) },
    });
    expectStandard(fromPoint.standard, 4.8, 1.8138, 0.4534);
    // Series exists: Ti = 4Td exactly for this rule (Pu/2 = 4·Pu/8), the double root.
    expect(fromPoint.series?.ti).toBeCloseTo(1.8138 / 2, 4);
    expect(fromPoint.parallel.ki).toBeCloseTo(4.8 / 1.8138, 3);
  });

  it("P 0.5Ku and PI 0.45Ku, Pu/1.2", () => {
    // REFERENCES.md "Ziegler & Nichols 1942" (memory).
    const ultimate = { gain: 8, period: 3.627599 };
    expectStandard(proposeTuning({ rule: "ziegler-nichols", controller: "P", ultimate }).standard, 4, null, 0);
    expectStandard(proposeTuning({ rule: "ziegler-nichols", controller: "PI", ultimate }).standard, 3.6, 3.627599 / 1.2, 0);
  });
});

describe("Ziegler–Nichols step response (standard form)", () => {
  it("K=2, τ=10, θ=2 → a = 0.4, PID 3.0, 4.0, 1.0", () => {
    // REFERENCES.md "Ziegler & Nichols 1942" step rule (memory; derived check).
    expectStandard(proposeTuning({ rule: "ziegler-nichols-step", controller: "PID", model: fopdt }).standard, 3, 4, 1, 10);
    expectStandard(proposeTuning({ rule: "ziegler-nichols-step", controller: "P", model: fopdt }).standard, 2.5, null, 0, 10);
    // Our documented PI variant: Ti = θ/0.3 = 3.33θ (original).
    expectStandard(proposeTuning({ rule: "ziegler-nichols-step", controller: "PI", model: fopdt }).standard, 2.25, 2 / 0.3, 0, 10);
  });
});

describe("Cohen–Coon (standard form)", () => {
  it("K=2, τ=10, θ=2 → PI 2.2917, 4.7077; PID 3.4583, 4.5479, 0.7018", () => {
    // REFERENCES.md "Cohen & Coon 1953" (memory for the formulas; derived check).
    expectStandard(proposeTuning({ rule: "cohen-coon", controller: "PI", model: fopdt }).standard, 2.2917, 4.7077, 0);
    expectStandard(proposeTuning({ rule: "cohen-coon", controller: "PID", model: fopdt }).standard, 3.4583, 4.5479, 0.7018);
    // Derived: P (1/r)(1 + r/3)/K with r = 0.2 → 2.6667.
    expectStandard(proposeTuning({ rule: "cohen-coon", controller: "P", model: fopdt }).standard, 8 / 3, null, 0);
  });
});

describe("SIMC (series form for PID, standard = series for PI)", () => {
  it("K=1, τ=10, θ=1, τc = θ → Kc 5, τI 8", () => {
    // REFERENCES.md "Skogestad 2003" (published rule; derived check).
    const p = proposeTuning({ rule: "simc", controller: "PI", model: { type: "fopdt", gain: 1, timeConstant: 10, deadTime: 1 } });
    expectStandard(p.standard, 5, 8, 0, 10);
  });

  it("integrating k'=1, θ=1 → Kc 0.5, τI 8", () => {
    // REFERENCES.md "Skogestad 2003" (published rule; derived check).
    const p = proposeTuning({ rule: "simc", controller: "PI", model: { type: "ipdt", gain: 1, deadTime: 1 } });
    expectStandard(p.standard, 0.5, 8, 0, 10);
  });

  it("user τc, the sampling half rule and the SOPDT PID", () => {
    // REFERENCES.md "Skogestad 2003" (published): τc settable; sampled control adds h/2 to θ;
    // SOPDT adds τD = τ2 in series form. Derived: τc = 3 → Kc = 10/4, τI = min(10, 16).
    const base = { rule: "simc" as const, controller: "PI" as const, model: { type: "fopdt" as const, gain: 1, timeConstant: 10, deadTime: 1 } };
    expectStandard(proposeTuning({ ...base, closedLoopTimeConstant: 3 }).standard, 2.5, 10, 0, 10);
    // h = 1 → θ = 1.5, τc = 1.5: Kc = 10/3, τI = min(10, 12).
    expectStandard(proposeTuning({ ...base, samplePeriod: 1 }).standard, 10 / 3, 10, 0, 10);
    const pid = proposeTuning({
      rule: "simc",
      controller: "PID",
      model: { type: "sopdt", gain: 1, timeConstant: 10, timeConstant2: 2, deadTime: 1 },
    });
    // Series Kc 5, τI 8, τD 2 → standard 5·(1 + 2/8), 10, 1.6.
    expectStandard(pid.series!, 5, 8, 2, 10);
    expectStandard(pid.standard, 6.25, 10, 1.6, 10);
  });

  it("refuses controllers the rule does not define", () => {
    expect(() => proposeTuning({ rule: "simc", controller: "PID", model: fopdt })).toThrow(/sopdt/);
    expect(() => proposeTuning({ rule: "simc", controller: "P", model: fopdt })).toThrow(ControlInputError);
  });
});

describe("IMC / lambda (standard form)", () => {
  it("K=2, τ=10, θ=2, λ=2 → lambda-PI 1.25, 10; IMC-PID 1.8333, 11, 0.9091", () => {
    // REFERENCES.md "Rivera, Morari & Skogestad 1986" (memory for the table; derived check).
    expectStandard(proposeTuning({ rule: "imc", controller: "PI", model: fopdt, lambda: 2 }).standard, 1.25, 10, 0);
    expectStandard(proposeTuning({ rule: "imc", controller: "PID", model: fopdt, lambda: 2 }).standard, 1.8333, 11, 0.9091);
  });

  it("default λ = max(θ, τ/4)", () => {
    // Our documented default (practice): here λ = 2.5 → Kc = 10/(2·4.5).
    expectStandard(proposeTuning({ rule: "imc", controller: "PI", model: fopdt }).standard, 10 / 9, 10, 0, 10);
  });
});

describe("AMIGO (standard form)", () => {
  const model = { type: "fopdt" as const, gain: 1, timeConstant: 0.5, deadTime: 0.3 };

  it("Kp=1, T=0.5, L=0.3 → PI 0.342708, 0.468806; PID 0.95, 0.445714, 0.127119 (tolerance 1e-6)", () => {
    // REFERENCES.md "Åström & Hägglund 2004" (published reference result). The published
    // figures carry six decimals, so a relative 1e-6 is only attainable on kc and ti; Td
    // (0.1271186…) is checked to the published precision, absolute 1e-6, like every value.
    const pi = proposeTuning({ rule: "amigo", controller: "PI", model }).standard;
    expectRelative(pi.kc, 0.342708, 1e-6);
    expectRelative(pi.ti, 0.468806, 1e-6);
    const pid = proposeTuning({ rule: "amigo", controller: "PID", model }).standard;
    expectRelative(pid.kc, 0.95, 1e-6);
    expectRelative(pid.ti, 0.445714, 1e-6);
    expect(Math.abs(pid.td - 0.127119)).toBeLessThan(1e-6);
    for (const [value, published] of [
      [pi.kc, 0.342708],
      [pi.ti!, 0.468806],
      [pid.kc, 0.95],
      [pid.ti!, 0.445714],
      [pid.td, 0.127119],
    ]) {
      expect(Math.abs(value - published)).toBeLessThan(1e-6);
    }
    // Derived, exact arithmetic: Td = 0.5·0.3·0.5/(0.09 + 0.5) = 0.075/0.59.
    expectRelative(pid.td, 0.075 / 0.59, 1e-12);
  });

  it("has no P rule", () => {
    expect(() => proposeTuning({ rule: "amigo", controller: "P", model })).toThrow(/does not define a P controller/);
  });
});

describe("proposals", () => {
  it("come in all forms, series only when Ti ≥ 4Td", () => {
    const all = proposeAllTunings({ model: fopdt });
    expect(all.length).toBeGreaterThanOrEqual(12);
    for (const p of all) {
      expect(p.parallel.kp).toBeCloseTo(p.standard.kc, 12);
      const ti = p.standard.ti;
      if (ti !== null && p.standard.td > 0 && ti < 4 * p.standard.td) expect(p.series).toBeUndefined();
      else expect(p.series).toBeDefined();
    }
  });

  it("validate the model with a named field", () => {
    const bad: TuningRequest = { rule: "amigo", controller: "PI", model: { type: "fopdt", gain: 1, timeConstant: -1, deadTime: 1 } };
    expect(() => proposeTuning(bad)).toThrow(expect.objectContaining({ field: "plant.timeConstant" }));
    expect(() => proposeAllTunings({ model: bad.model })).toThrow(ControlInputError);
    expect(() => proposeTuning({ rule: "cohen-coon", controller: "PI", model: { ...fopdt, deadTime: 0 } })).toThrow(
      expect.objectContaining({ field: "model.deadTime" }),
    );
  });
});
