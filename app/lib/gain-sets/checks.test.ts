// Proposal checks. Expected values: app/lib/control/REFERENCES.md, "Gain-set checks" and
// "Closed-form facts" (integrator plus delay under P control).
import { describe, expect, it } from "vitest";
import { checkGainSet, type CheckTemplate, type CheckedGainSet } from "./checks";

// k'e^{−θs}/s with k' = 1, θ = 1: under P control Kc, ωc = Kc, PM = 90° − Kc·180/π,
// ω180 = π/2, GM = π/(2·Kc), unstable for Kc > π/2 (derived; REFERENCES.md "Gain-set checks").
const ipdt = { type: "ipdt" as const, gain: 1, deadTime: 1 };

const template: CheckTemplate = {
  key: "zone_1",
  envelope: { kp: [0, 5], ki: [0, 1], kd: [0, 2] },
  outputMin: 0,
  outputMax: 100,
  referenceModel: ipdt,
  minGainMargin: 2,
  minPhaseMarginDeg: 30,
};

const set = (over: Partial<CheckedGainSet> = {}): CheckedGainSet => ({
  gains: { kp: Math.PI / 6, ki: 0, kd: 0 },
  filterN: null,
  setpointWeight: 1,
  trackingTimeS: null,
  outputMin: 0,
  outputMax: 100,
  integratorMin: 0,
  integratorMax: 100,
  samplePeriodS: 0.01,
  ...over,
});

const byName = (result: ReturnType<typeof checkGainSet>) => Object.fromEntries(result.checks.map((c) => [c.name, c]));

describe("gain-set checks", () => {
  it("passes P control Kc = π/6 on 1·e^{−s}/s: GM = 3, PM = 60° (continuous, closed form)", () => {
    const result = checkGainSet(set(), template, { continuous: true });
    expect(result.passed).toBe(true);
    expect(result.margins!.stable).toBe(true);
    expect(result.margins!.gainMargin).toBeCloseTo(3, 6);
    expect(result.margins!.phaseMargin).toBeCloseTo(60, 4);
  });

  it("refuses Kc = 1.0: GM = π/2 ≈ 1.571 < 2 while PM = 90° − 57.30° = 32.70° passes", () => {
    const result = checkGainSet(set({ gains: { kp: 1, ki: 0, kd: 0 } }), template, { continuous: true });
    expect(result.passed).toBe(false);
    expect(result.margins!.gainMargin).toBeCloseTo(Math.PI / 2, 6);
    expect(result.margins!.phaseMargin).toBeCloseTo(90 - 180 / Math.PI, 4);
    const closed = byName(result).closed_loop!;
    expect(closed.passed).toBe(false);
    expect(closed.message).toContain("gain margin");
    expect(closed.message).not.toContain("phase margin");
  });

  it("refuses a phase margin below the template's minimum (PM = 90° − 0.8·180/π = 44.16° < 50°)", () => {
    const result = checkGainSet(set({ gains: { kp: 0.8, ki: 0, kd: 0 } }), { ...template, minGainMargin: 1.5, minPhaseMarginDeg: 50, envelope: { ...template.envelope } }, { continuous: true });
    expect(result.margins!.phaseMargin).toBeCloseTo(90 - (0.8 * 180) / Math.PI, 4);
    expect(byName(result).closed_loop!.passed).toBe(false);
    expect(byName(result).closed_loop!.message).toContain("phase margin");
  });

  it("refuses an unstable loop (Kc = 2 > π/2)", () => {
    const result = checkGainSet(set({ gains: { kp: 2, ki: 0, kd: 0 } }), template, { continuous: true });
    expect(result.margins!.stable).toBe(false);
    expect(byName(result).closed_loop!.message).toMatch(/unstable/);
  });

  it("checks the sampled loop by default: the hold's lag lowers the phase margin below the continuous 60°", () => {
    // Derived: the zero-order hold adds about ωc·h/2 = (π/6)(0.5)/2 rad ≈ 7.5° of lag.
    const result = checkGainSet(set({ samplePeriodS: 0.5 }), template);
    expect(result.margins!.phaseMargin!).toBeLessThan(60);
    expect(result.margins!.phaseMargin!).toBeGreaterThan(60 - 7.5 - 2);
  });

  it("refuses gains outside the envelope and names them", () => {
    const result = checkGainSet(set({ gains: { kp: 6, ki: 0, kd: 3 } }), template, { continuous: true });
    const envelope = byName(result).envelope!;
    expect(envelope.passed).toBe(false);
    expect(envelope.fields).toEqual(["kp", "kd"]);
  });

  it("refuses an output range wider than the template's", () => {
    const result = checkGainSet(set({ outputMin: -10 }), template, { continuous: true });
    expect(byName(result).envelope!.fields).toEqual(["outputMin", "outputMax"]);
  });

  it.each([
    ["reaching above the output range", { integratorMin: 0, integratorMax: 120 }],
    ["reaching below the output range", { integratorMin: -5, integratorMax: 50 }],
    ["empty", { integratorMin: 60, integratorMax: 40 }],
  ])("refuses integrator limits %s", (_, over) => {
    const result = checkGainSet(set(over), template, { continuous: true });
    expect(byName(result).integrator_limits!.passed).toBe(false);
    expect(result.passed).toBe(false);
  });

  it("accepts integrator limits inside the output range", () => {
    expect(byName(checkGainSet(set({ integratorMin: 10, integratorMax: 90 }), template, { continuous: true })).integrator_limits!.passed).toBe(true);
  });

  it.each([
    ["NaN kp", { gains: { kp: Number.NaN, ki: 0, kd: 0 } }, "kp"],
    ["infinite output max", { outputMax: Number.POSITIVE_INFINITY }, "outputMax"],
    ["infinite entered Ti", { entered: { form: "standard", kc: 1, ti: Number.POSITIVE_INFINITY, td: 0 } }, "entered.ti"],
  ])("refuses %s and runs nothing else", (_, over, field) => {
    const result = checkGainSet(set(over as Partial<CheckedGainSet>), template, { continuous: true });
    const finite = byName(result).finite!;
    expect(finite.passed).toBe(false);
    expect(finite.fields).toContain(field);
    expect(result.checks.slice(1).every((c) => !c.passed && c.message.startsWith("Not run"))).toBe(true);
  });

  it.each([
    ["b above 1", { setpointWeight: 1.2 }, "setpointWeight"],
    ["zero sample period", { samplePeriodS: 0 }, "samplePeriodS"],
    ["negative filter N", { filterN: -1 }, "filterN"],
  ])("refuses %s", (_, over, field) => {
    const finite = byName(checkGainSet(set(over), template, { continuous: true })).finite!;
    expect(finite.passed).toBe(false);
    expect(finite.fields).toEqual([field]);
  });

  it("fails the closed-loop check when the template has no reference model", () => {
    const result = checkGainSet(set(), { ...template, referenceModel: null });
    expect(byName(result).closed_loop!.passed).toBe(false);
    expect(result.margins).toBeNull();
  });
});
