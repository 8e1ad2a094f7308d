import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { ControlInputError } from "./errors";
import {
  checkGainSigns,
  describeGainForms,
  parallelToStandard,
  seriesToStandard,
  standardToParallel,
  standardToSeries,
  toParallelGains,
  toStandardGains,
} from "./forms";

describe("PID form conversions", () => {
  it("standard → parallel", () => {
    // REFERENCES.md "Conventions" (published): kp = Kc, ki = Kc/Ti, kd = Kc·Td.
    const p = standardToParallel({ kc: 4.8, ti: 1.8138, td: 0.4534 });
    expect(p.kp).toBeCloseTo(4.8, 12);
    expect(p.ki).toBeCloseTo(4.8 / 1.8138, 12);
    expect(p.kd).toBeCloseTo(4.8 * 0.4534, 12);
  });

  it("series → standard", () => {
    // REFERENCES.md "Conventions" (published): Kc' = Kc(1 + τD/τI), Ti' = τI + τD,
    // Td' = τI·τD/(τI + τD). Derived: Kc 2, τI 8, τD 2 → 2.5, 10, 1.6.
    const s = seriesToStandard({ kc: 2, ti: 8, td: 2 });
    expect(s.kc).toBeCloseTo(2.5, 12);
    expect(s.ti).toBeCloseTo(10, 12);
    expect(s.td).toBeCloseTo(1.6, 12);
  });

  it("standard → series exists only for Ti ≥ 4Td", () => {
    // REFERENCES.md "Conventions" (derived): the series form needs real τI, τD, i.e. Ti ≥ 4Td.
    expect(standardToSeries({ kc: 1, ti: 3, td: 1 })).toBeNull();
    const atDoubleRoot = standardToSeries({ kc: 1, ti: 4, td: 1 });
    expect(atDoubleRoot?.ti).toBeCloseTo(2, 12);
    expect(atDoubleRoot?.td).toBeCloseTo(2, 12);
    expect(atDoubleRoot?.kc).toBeCloseTo(0.5, 12);
    expect(describeGainForms({ kc: 1, ti: 3, td: 1 }).series).toBeUndefined();
  });

  it("null Ti means no integral action", () => {
    // REFERENCES.md "Conventions": ki = Kc/Ti → 0 as Ti → ∞ (derived).
    expect(standardToParallel({ kc: 2, ti: null, td: 0.5 })).toEqual({ kp: 2, ki: 0, kd: 1 });
    expect(parallelToStandard({ kp: 2, ki: 0, kd: 1 })).toEqual({ kc: 2, ti: null, td: 0.5 });
    expect(seriesToStandard({ kc: 2, ti: null, td: 0.5 })).toEqual({ kc: 2, ti: null, td: 0.5 });
  });

  it("refuses gains without a standard form, naming the field", () => {
    expect(() => parallelToStandard({ kp: 0, ki: 1, kd: 0 })).toThrow(ControlInputError);
    try {
      toParallelGains({ form: "standard", kc: 1, ti: -2, td: 0 });
      expect.unreachable();
    } catch (error) {
      expect(error).toBeInstanceOf(ControlInputError);
      expect((error as ControlInputError).field).toBe("gains.ti");
    }
  });

  it("round-trips parallel ↔ standard (property)", () => {
    // REFERENCES.md "Conventions" (derived): the two maps are inverses for kp ≠ 0.
    fc.assert(
      fc.property(
        fc.double({ min: 0.01, max: 100, noNaN: true }),
        fc.double({ min: 0.001, max: 1000, noNaN: true }),
        fc.double({ min: 0, max: 100, noNaN: true }),
        (kc, ti, td) => {
          const back = parallelToStandard(standardToParallel({ kc, ti, td }));
          expect(back.kc).toBeCloseTo(kc, 9);
          expect(Math.abs((back.ti as number) - ti) / ti).toBeLessThan(1e-12);
          expect(Math.abs(back.td - td)).toBeLessThan(1e-12 * Math.max(1, td));
        },
      ),
    );
  });

  it("round-trips series → standard → series (property)", () => {
    // REFERENCES.md "Conventions" (derived): with τI ≥ τD the factorisation picks τI back.
    fc.assert(
      fc.property(
        fc.double({ min: 0.01, max: 100, noNaN: true }),
        fc.double({ min: 0.01, max: 1000, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        (kc, tauI, fraction) => {
          const tauD = tauI * fraction;
          const standard = seriesToStandard({ kc, ti: tauI, td: tauD });
          expect(standard.ti! >= 4 * standard.td - 1e-9 * standard.ti!).toBe(true);
          const back = standardToSeries(standard);
          expect(back).not.toBeNull();
          expect(Math.abs(back!.kc - kc) / kc).toBeLessThan(1e-6);
          expect(Math.abs(back!.ti! - tauI) / tauI).toBeLessThan(1e-6);
          expect(Math.abs(back!.td - tauD)).toBeLessThan(1e-6 * tauI);
        },
      ),
    );
  });
});

describe("sign convention in every form (issue 8, defect 9)", () => {
  // Derived from kp = Kc, ki = Kc/Ti, kd = Kc·Td (REFERENCES.md conventions): a reverse-acting
  // controller Kc = −2, Ti = 4, Td = 0.5 is kp = −2, ki = −0.5, kd = −1 in parallel form.
  it("a reverse-acting controller converts both ways", () => {
    expect(standardToParallel({ kc: -2, ti: 4, td: 0.5 })).toEqual({ kp: -2, ki: -0.5, kd: -1 });
    expect(toStandardGains({ form: "parallel", kp: -2, ki: -0.5, kd: -1 })).toEqual({ kc: -2, ti: 4, td: 0.5 });
    expect(toParallelGains({ form: "parallel", kp: -2, ki: -0.5, kd: -1 })).toEqual({ kp: -2, ki: -0.5, kd: -1 });
  });

  it("refuses mixed signs in parallel form, naming the field", () => {
    expect(checkGainSigns({ kp: -2, ki: 0.5, kd: 0 })?.field).toBe("ki");
    expect(checkGainSigns({ kp: 2, ki: 0.5, kd: -1 })?.field).toBe("kd");
    expect(checkGainSigns({ kp: 0, ki: -0.5, kd: 0 })).toBeNull();
    expect(() => toParallelGains({ form: "parallel", kp: 2, ki: -0.5, kd: 0 })).toThrow(expect.objectContaining({ field: "gains.ki" }));
  });
});
