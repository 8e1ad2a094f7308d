import { describe, expect, it } from "vitest";
import { fitFopdt, type FopdtModel } from "~/lib/control";
import {
  compareProposals,
  decimationIndices,
  describeGains,
  estimateTwoPoint,
  generateExampleStepTest,
  judgeRisk,
  modelResponseOnData,
  niceCeil,
  niceFloor,
  planScenario,
  simulateBenchLoop,
  suggestSettings,
  type BenchSettings,
} from "./bench";
import { parseStepTestCsv } from "./step-test-csv";
import { toStepTestCsv } from "./bench";

const model: FopdtModel = { type: "fopdt", gain: 2, timeConstant: 10, deadTime: 2 };

function settings(overrides: Partial<BenchSettings> = {}): BenchSettings {
  return { ...suggestSettings(model), ...overrides };
}

/** Exact FOPDT step data: u from 0 to 1 at t = 5 s. */
function exactStepTest(m: FopdtModel, step = 5, h = 0.1, duration = 80) {
  const t: number[] = [];
  const u: number[] = [];
  const y: number[] = [];
  for (let i = 0; i * h <= duration + 1e-9; i++) {
    const time = i * h;
    const since = time - step - m.deadTime;
    t.push(time);
    u.push(time >= step ? 1 : 0);
    y.push(since > 0 ? m.gain * (1 - Math.exp(-since / m.timeConstant)) : 0);
  }
  return { t, u, y };
}

describe("nice numbers", () => {
  it("rounds to 1-2-5 steps", () => {
    expect(niceCeil(48)).toBe(50);
    expect(niceCeil(12)).toBe(20);
    expect(niceCeil(100)).toBe(100);
    expect(niceFloor(0.4)).toBe(0.2);
    expect(niceFloor(2.1)).toBe(2);
    expect(niceFloor(7)).toBe(5);
  });
});

describe("planScenario", () => {
  it("puts the load step after four open-loop time scales", () => {
    expect(planScenario(model, 0.2)).toEqual({ loadTime: 50, duration: 100, samples: 501 });
  });

  it("refuses a sample period that would need too many samples", () => {
    expect(() => planScenario(model, 1e-4)).toThrow(/too short/);
  });
});

describe("suggestSettings", () => {
  it("takes the operating point, set-point change and limits from the step test", () => {
    const s = suggestSettings(model, exactStepTest(model));
    expect(s.operatingPoint).toEqual({ output: 0, value: 0 });
    expect(s.setpointChange).toBe(2);
    expect(s.loadStep).toBe(-0.5);
    expect(s.outputLimits).toEqual({ min: 0, max: 100 });
    expect(s.samplePeriod).toBe(0.2);
  });

  it("centres the limits on zero for a typed model", () => {
    const s = suggestSettings(model);
    expect(s.outputLimits).toEqual({ min: -5, max: 5 });
    expect(s.setpointChange).toBe(1);
  });
});

describe("judgeRisk", () => {
  it("flags Ms above 2 and phase margin under 30° in words", () => {
    expect(judgeRisk({ stable: true, phaseMargin: 60, peakSensitivity: 1.4 })).toEqual({ level: "ok", reasons: [] });
    expect(judgeRisk({ stable: true, phaseMargin: 25, peakSensitivity: 2.3 })).toEqual({
      level: "risky",
      reasons: ["Ms above 2", "phase margin under 30°"],
    });
    expect(judgeRisk({ stable: false, phaseMargin: -5, peakSensitivity: null }).level).toBe("unstable");
  });

  it("never calls an unstable or diverged loop ok (issue 8, defect 3)", () => {
    // Whatever the margins say, an unstable verdict or a diverged run is "unstable".
    expect(judgeRisk({ stable: false, phaseMargin: 60, peakSensitivity: 1.2 }).level).toBe("unstable");
    expect(judgeRisk({ stable: true, phaseMargin: 60, peakSensitivity: 1.2 }, true)).toEqual({ level: "unstable", reasons: ["the simulated response diverged"] });
  });
});

describe("compareProposals", () => {
  it("scores every defined rule × kind on the FOPDT", () => {
    const rows = compareProposals(model, settings());
    const ids = rows.map((r) => r.id).sort();
    // SIMC has no P or FOPDT PID; IMC and AMIGO have no P.
    expect(ids).toEqual(
      [
        "amigo-PI",
        "amigo-PID",
        "cohen-coon-P",
        "cohen-coon-PI",
        "cohen-coon-PID",
        "imc-PI",
        "imc-PID",
        "simc-PI",
        "ziegler-nichols-P",
        "ziegler-nichols-PI",
        "ziegler-nichols-PID",
        "ziegler-nichols-step-P",
        "ziegler-nichols-step-PI",
        "ziegler-nichols-step-PID",
      ].sort(),
    );
    for (const row of rows) {
      // Derived: Ms ≥ 1 for a stable strictly proper loop (REFERENCES.md in lib/control); null when unstable.
      if (row.stable) expect(row.peakSensitivity).toBeGreaterThan(1);
      else expect(row.peakSensitivity).toBeNull();
      if (!row.stable) expect(row.risk.level).toBe("unstable");
      expect(row.iae).toBeGreaterThan(0);
      expect(row.saturatedFraction).toBeGreaterThanOrEqual(0);
      expect(row.saturatedFraction).toBeLessThanOrEqual(1);
    }
  });

  it("gives SIMC PI its published gains and a safe verdict, and flags ZN PID as risky", () => {
    const rows = compareProposals(model, settings({ samplePeriod: 0.01 }));
    const simc = rows.find((r) => r.id === "simc-PI")!;
    // τc = θ + h/2: Kc = τ / (K (τc + θ')), θ' = θ + h/2.
    const theta = 2.005;
    expect(simc.standard.kc).toBeCloseTo(10 / (2 * 2 * theta), 6);
    expect(simc.standard.ti).toBeCloseTo(Math.min(10, 8 * theta), 6);
    expect(simc.risk.level).toBe("ok");
    expect(simc.overshootPercent!).toBeLessThan(20);
    expect(simc.settlingTime).not.toBeNull();
    const zn = rows.find((r) => r.id === "ziegler-nichols-PID")!;
    expect(zn.risk.level).not.toBe("ok");
  });

  it("keeps only the chosen controller kinds and honours τc", () => {
    const rows = compareProposals(model, settings({ controllerKinds: ["PI"], simcTimeConstant: 8 }));
    expect(rows.every((r) => r.kind === "PI")).toBe(true);
    const simc = rows.find((r) => r.rule === "simc")!;
    const theta = 2 + 0.1;
    expect(simc.standard.kc).toBeCloseTo(10 / (2 * (8 + theta)), 6);
  });

  it("refuses limits that leave out the operating point", () => {
    expect(() => compareProposals(model, settings({ outputLimits: { min: 1, max: 5 } }))).toThrow(/operating output/);
  });
});

describe("simulateBenchLoop", () => {
  it("returns absolute series: the loop settles on the set point and holds it after the load", () => {
    const s = settings({ operatingPoint: { output: 20, value: 50 }, outputLimits: { min: 0, max: 100 } });
    const response = simulateBenchLoop(model, { form: "standard", kc: 1.2, ti: 10, td: 0 }, s);
    const n = response.t.length;
    expect(response.t[n - 1]).toBeCloseTo(100, 6);
    expect(response.r[n - 1]).toBe(51);
    expect(response.y[0]).toBe(50);
    expect(response.u[0]).toBeGreaterThan(20);
    expect(response.y[n - 1]).toBeCloseTo(51, 2);
    // The integrator has taken up the load: u sits 1/K for the set point plus the load's 0.25 above u0.
    expect(s.loadStep).toBe(-0.25);
    expect(response.u[n - 1]).toBeCloseTo(20 + 0.5 + 0.25, 2);
  });

  it("reports a diverging loop as unstable, with the time it diverged", () => {
    const response = simulateBenchLoop(model, { form: "standard", kc: 20, ti: 2, td: 0 }, settings({ outputLimits: null }));
    expect(response.score.risk.level).toBe("unstable");
    expect(response.score.stable).toBe(false);
    expect(response.score.peakSensitivity).toBeNull();
    expect(response.score.divergedAt).not.toBeNull();
  });

  it("calls the issue's unstable P loop unstable, never Sound (issue 8, defect 3)", () => {
    // FOPDT K=1, τ=1, θ=1 with P kp=5 > Ku = 2.2611 (REFERENCES.md in lib/control).
    const fopdt = { type: "fopdt" as const, gain: 1, timeConstant: 1, deadTime: 1 };
    const response = simulateBenchLoop(fopdt, { form: "parallel", kp: 5, ki: 0, kd: 0 }, settings({ outputLimits: null, samplePeriod: 0.05 }));
    expect(response.score.risk.level).toBe("unstable");
    expect(response.score.peakSensitivity).toBeNull();
  });

  it("counts saturation when the limits are tight", () => {
    const response = simulateBenchLoop(model, { form: "standard", kc: 3, ti: 10, td: 0 }, settings({ outputLimits: { min: -0.6, max: 0.6 } }));
    expect(response.score.saturatedFraction).toBeGreaterThan(0.01);
  });
});

describe("describeGains", () => {
  it("converts hand-typed parallel gains and explains what it cannot convert", () => {
    const ok = describeGains({ form: "parallel", kp: 2, ki: 0.5, kd: 1 });
    expect(ok).toEqual({ ok: true, standard: { kc: 2, ti: 4, td: 0.5 }, parallel: { kp: 2, ki: 0.5, kd: 1 } });
    const bad = describeGains({ form: "parallel", kp: 0, ki: 0.5, kd: 0 });
    expect(bad.ok).toBe(false);
  });
});

describe("step-test helpers", () => {
  it("overlays a model exactly on data it generated", () => {
    const data = exactStepTest(model);
    const fitted = modelResponseOnData(model, data);
    const worst = Math.max(...fitted.map((v, i) => Math.abs(v - data.y[i])));
    expect(worst).toBeLessThan(1e-9);
  });

  it("gives Smith and Sundaresan–Krishnaswamy estimates near the true model", () => {
    const data = exactStepTest(model, 5, 0.05, 120);
    for (const method of ["smith", "sundaresan-krishnaswamy"] as const) {
      const estimate = estimateTwoPoint(data, method);
      expect(estimate.ok).toBe(true);
      if (!estimate.ok) continue;
      expect(estimate.model.gain).toBeCloseTo(2, 1);
      expect(Math.abs(estimate.model.timeConstant - 10)).toBeLessThan(0.6);
      expect(Math.abs(estimate.model.deadTime - 2)).toBeLessThan(0.6);
    }
    const flat = { t: data.t, u: data.t.map(() => 1), y: data.y };
    const refused = estimateTwoPoint(flat, "smith");
    expect(refused.ok).toBe(false);
    if (!refused.ok) expect(refused.message).toMatch(/no step/);
  });

  it("builds an example test the CSV reader accepts and the fit recovers", () => {
    const samples = generateExampleStepTest();
    expect(generateExampleStepTest()).toEqual(samples);
    const parsed = parseStepTestCsv(toStepTestCsv(samples));
    expect(parsed.ok).toBe(true);
    const fit = fitFopdt(samples);
    expect(fit.model.gain).toBeCloseTo(1.6, 1);
    expect(Math.abs(fit.model.timeConstant - 42) / 42).toBeLessThan(0.05);
    expect(Math.abs(fit.model.deadTime - 6)).toBeLessThan(0.5);
  });

  it("decimates long series and keeps peaks", () => {
    const n = 10_000;
    const s = Array.from({ length: n }, (_, i) => (i === 4321 ? 99 : Math.sin(i / 100)));
    const idx = decimationIndices(n, [s], 600);
    expect(idx.length).toBeLessThanOrEqual(620);
    expect(idx).toContain(4321);
    expect(idx[0]).toBe(0);
    expect(idx[idx.length - 1]).toBe(n - 1);
    expect(decimationIndices(5, [[1, 2, 3, 4, 5]])).toEqual([0, 1, 2, 3, 4]);
  });
});
