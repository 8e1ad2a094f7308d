import { describe, expect, it } from "vitest";
import { assessLoopHealth, bandForScore, oscillationLimitPerHour, HEALTH_SCORE_TABLE, scoreHealthSignals, signalPenalty, type DigestSummary, type HealthSignals, type HealthThresholdSettings } from "./assess";

// Thresholds as the demo's barrel zones (practice values; REFERENCES.md in this folder).
const thresholds: HealthThresholdSettings = {
  acceptableAmplitude: 1.5,
  saturationWatch: 0.05,
  saturationAct: 0.2,
  clampWatch: 0.05,
  clampAct: 0.2,
  oscillationPerHour: 4.5,
  errRmsWatch: 1.5,
  silentAfter: 600,
};
const quiet: HealthSignals = { saturationShare: 0, clampShare: 0, oscillationPerHour: 0, errorRmsRatio: 0 };

describe("the health score table (issue 8, defect 7)", () => {
  // Expected values derived from the table's rule (assess.ts, HEALTH_SCORE_TABLE): penalty 0
  // below watch, 25 at watch, → 50 just below act, 51 at act, 100 at full; score = 100 − Σ.
  const edges = HEALTH_SCORE_TABLE.map((row) => ({
    signal: row.signal,
    watch: row.watch(thresholds),
    act: row.act(thresholds),
    full: row.full(thresholds),
  }));

  it.each(edges)("$signal: each threshold's edge bands as its own band", ({ signal, watch, act, full }) => {
    const at = (value: number) => scoreHealthSignals({ ...quiet, [signal]: value }, thresholds);
    const below = (x: number) => x * (1 - 1e-9);
    expect(at(below(watch))).toEqual({ score: 100, reasons: [] });
    expect(at(watch).score).toBe(75);
    expect(bandForScore(at(watch).score)).toBe("watch");
    expect(at(below(act)).score).toBe(50);
    expect(bandForScore(at(below(act)).score)).toBe("watch");
    expect(at(act).score).toBe(49);
    expect(bandForScore(at(act).score)).toBe("act");
    expect(at(full).score).toBe(0);
    expect(at(full * 2).score).toBe(0);
  });

  it("a saturation share equal to saturationAct bands act (it banded watch at 50)", () => {
    // Input from the issue: share = saturationAct = 0.20.
    expect(bandForScore(scoreHealthSignals({ ...quiet, saturationShare: 0.2 }, thresholds).score)).toBe("act");
  });

  it("100 % saturation scores lower than 40 % (the old cap made them equal)", () => {
    // Derived: 40 %: 51 + 49·0.2/0.8 = 63.25 → score 36; 100 %: penalty 100 → score 0.
    expect(scoreHealthSignals({ ...quiet, saturationShare: 0.4 }, thresholds).score).toBe(36);
    expect(scoreHealthSignals({ ...quiet, saturationShare: 1 }, thresholds).score).toBe(0);
  });

  it("one windup episode (saturated and clamped together) counts once", () => {
    // Derived: both at watch → windup group penalty max(25, 25) = 25 → score 75, not 50.
    expect(scoreHealthSignals({ ...quiet, saturationShare: 0.05, clampShare: 0.05 }, thresholds).score).toBe(75);
  });

  it("separate problems add: two at watch band watch, three band act", () => {
    // Derived: 100 − 25 − 25 = 50 (watch); 100 − 3·25 = 25 (act).
    expect(scoreHealthSignals({ ...quiet, saturationShare: 0.05, oscillationPerHour: 4.5 }, thresholds).score).toBe(50);
    expect(scoreHealthSignals({ ...quiet, saturationShare: 0.05, oscillationPerHour: 4.5, errorRmsRatio: 1.5 }, thresholds).score).toBe(25);
  });

  it("the penalty rule at its corners", () => {
    expect(signalPenalty(0, 0.05, 0.2, 1)).toBe(0);
    expect(signalPenalty(0.05, 0.05, 0.2, 1)).toBe(25);
    expect(signalPenalty(0.125, 0.05, 0.2, 1)).toBe(37.5);
    expect(signalPenalty(0.2, 0.05, 0.2, 1)).toBe(51);
    expect(signalPenalty(0.6, 0.05, 0.2, 1)).toBe(75.5);
    expect(signalPenalty(1, 0.05, 0.2, 1)).toBe(100);
  });

  it("score bands at 80 and 50", () => {
    expect(bandForScore(80)).toBe("steady");
    expect(bandForScore(79)).toBe("watch");
    expect(bandForScore(50)).toBe("watch");
    expect(bandForScore(49)).toBe("act");
  });
});

describe("assessLoopHealth", () => {
  const digest = (over: Partial<DigestSummary>): DigestSummary => ({
    windowStart: new Date("2026-12-02T10:00:00Z"),
    windowEnd: new Date("2026-12-02T10:05:00Z"),
    samples: 300,
    errRms: 0.1,
    satHighFrac: 0,
    satLowFrac: 0,
    intClampFrac: 0,
    oscCount: 0,
    ...over,
  });
  const now = new Date("2026-12-02T10:06:00Z");

  it("scores the digests' shares through the table", () => {
    // Derived: saturation 0.20 (high 0.15 + low 0.05) = saturationAct → score 49, act.
    const a = assessLoopHealth([digest({ satHighFrac: 0.15, satLowFrac: 0.05, intClampFrac: 0.2 })], thresholds, now);
    expect(a).toEqual({ band: "act", score: 49, reasons: ["Output saturated 20 % of the time.", "Integrator held at a limit 20 % of the time."] });
    expect(assessLoopHealth([digest({})], thresholds, now)).toEqual({ band: "steady", score: 100, reasons: [] });
  });

  it("counts load detections over at least the supervision time 50·Tu, never extrapolating a few minutes", () => {
    // Hägglund's rule (REFERENCES.md in this folder): more than 10 detections within
    // Tsup = 50·Tu. With the limit 4.5/h (Tu = 160 s), Tsup = 36 000 / 4.5 = 8000 s.
    // One detection in one 5-minute digest: 1 · 3600 / 8000 = 0.45 per hour — no finding
    // (a plain rate would have said 12 per hour, an oscillation).
    expect(assessLoopHealth([digest({ oscCount: 1 })], thresholds, now)).toEqual({ band: "steady", score: 100, reasons: [] });
    // Eleven detections in the same 5 minutes: 11 · 3600 / 8000 = 4.95 per hour ≥ 4.5 — watch.
    const many = assessLoopHealth([digest({ oscCount: 11 })], thresholds, now);
    expect(many.band).toBe("watch");
    expect(many.reasons).toEqual(["5.0 load disturbances per hour (oscillation)."]);
  });

  it("is silent without recent digests", () => {
    expect(assessLoopHealth([digest({})], thresholds, new Date("2026-12-02T11:00:00Z")).band).toBe("silent");
    expect(assessLoopHealth([], thresholds, now)).toEqual({ band: "silent", score: null, reasons: ["No digest received yet."] });
  });
});

describe("oscillation limit from the ultimate period (issue 8, defect 9)", () => {
  it("Tu = 160 s gives 4.5 detections per hour", () => {
    // Hägglund 1995 (memory), REFERENCES.md: 10 detections in 50·Tu → 720/Tu = 720/160 = 4.5.
    expect(oscillationLimitPerHour(160)).toBe(4.5);
    expect(oscillationLimitPerHour(1.6)).toBeCloseTo(450, 9);
  });
});
