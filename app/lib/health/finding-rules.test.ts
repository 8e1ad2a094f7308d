// Figures → findings (finding-rules.ts); defaults and severity rules: REFERENCES.md, "Findings".
import { describe, expect, it } from "vitest";
import { DEFAULT_FINDING_SETTINGS, findingSettingsOf, judgeLoop, type JudgeInput } from "./finding-rules";
import type { LoopHealthFigures } from "./figures";

const now = new Date("2026-12-01T12:00:00Z");
const thresholds = { saturationWatch: 0.05, saturationAct: 0.2, clampWatch: 0.05, clampAct: 0.2 };
const calm: LoopHealthFigures = {
  saturation: { share24h: 0.01, share7d: 0.01, slopePerDay: 0, projectedActAt: null },
  windup: { share24h: 0, pinnedShare24h: 0 },
  oscillation: { detectionsPerHour: 1, limitPerHour: 4.5 },
  drift: { state: "in_control", baselineMean: 0.2, baselineStd: 0.02, cusumHigh: 0.5, cusumLow: 0, limit: 5, sinceGainVersion: 1 },
};
const input = (over: Partial<JudgeInput> = {}, figures: Partial<LoopHealthFigures> = {}): JudgeInput => ({
  figures: { ...calm, ...figures },
  driftFirstSignalAt: null,
  thresholds,
  settings: DEFAULT_FINDING_SETTINGS,
  lastDigestEnd: new Date(now.getTime() - 60_000),
  now,
  ...over,
});
const byKind = (i: JudgeInput) => Object.fromEntries(judgeLoop(i).map((j) => [j.kind, j.status === "trip" ? j.severity : j.status]));

describe("judgeLoop", () => {
  it("finds nothing on a calm loop", () => {
    expect(byKind(input())).toEqual({ silent: "clear", saturation: "clear", windup: "clear", oscillation: "clear", drift: "clear" });
  });

  it.each([
    [0.049, "clear"],
    [0.05, "warning"],
    [0.199, "warning"],
    [0.2, "critical"],
  ])("saturation share %s over 24 h → %s (watch 5 %, act 20 %)", (share, expected) => {
    expect(byKind(input({}, { saturation: { ...calm.saturation, share24h: share } })).saturation).toBe(expected);
  });

  it("raises info for a share still below watch that reaches the act limit within the horizon, not beyond it", () => {
    const soon = { ...calm.saturation, share24h: 0.03, slopePerDay: 0.03, projectedActAt: new Date(now.getTime() + 6 * 86_400_000) };
    expect(byKind(input({}, { saturation: soon })).saturation).toBe("info");
    expect(byKind(input({}, { saturation: { ...soon, projectedActAt: new Date(now.getTime() + 8 * 86_400_000) } })).saturation).toBe("clear");
  });

  it("judges oscillation by Hägglund's rate: over the limit warning, over twice it critical", () => {
    const at = (rate: number) => byKind(input({}, { oscillation: { detectionsPerHour: rate, limitPerHour: 4.5 } })).oscillation;
    expect([at(4.5), at(4.95), at(9), at(9.1)]).toEqual(["clear", "warning", "warning", "critical"]);
  });

  it("judges drift: high side over h warning, over 2h critical, low side info, learning not judged", () => {
    const drift = (over: Partial<LoopHealthFigures["drift"]>) => byKind(input({}, { drift: { ...calm.drift, ...over } })).drift;
    expect(drift({ state: "drifting", cusumHigh: 6 })).toBe("warning");
    expect(drift({ state: "drifting", cusumHigh: 11 })).toBe("critical");
    expect(drift({ state: "drifting", cusumHigh: 0, cusumLow: 6 })).toBe("info");
    expect(drift({ state: "learning" })).toBe("unknown");
  });

  it("calls a loop silent after 3 × its expected interval and judges nothing else then", () => {
    const at = (quietS: number) => byKind(input({ lastDigestEnd: new Date(now.getTime() - quietS * 1000) }, { saturation: { ...calm.saturation, share24h: 0.5 } }));
    expect(at(900).silent).toBe("clear");
    expect(at(901)).toEqual({ silent: "warning", saturation: "unknown", windup: "unknown", oscillation: "unknown", drift: "unknown" });
    expect(at(86_401).silent).toBe("critical");
    expect(byKind(input({ lastDigestEnd: null })).silent).toBe("unknown");
  });

  it("keeps the evidence: metric, value, threshold and window", () => {
    const [sat] = judgeLoop(input({}, { saturation: { ...calm.saturation, share24h: 0.25 } })).filter((j) => j.kind === "saturation");
    expect(sat).toMatchObject({ status: "trip", evidence: { metric: "saturation.share24h", value: 0.25, threshold: 0.2, unit: "share", windowStart: "2026-11-30T12:00:00.000Z", windowEnd: "2026-12-01T11:59:00.000Z" } });
  });
});

describe("findingSettingsOf", () => {
  it("fills defaults, keeps stored values, derives the interval from silentAfter", () => {
    expect(findingSettingsOf({})).toEqual(DEFAULT_FINDING_SETTINGS);
    expect(DEFAULT_FINDING_SETTINGS).toMatchObject({ expectedDigestIntervalS: 300, autoResolveAfterS: 21_600, driftBaselineWindows: 24, driftK: 0.5, driftH: 5 });
    expect(findingSettingsOf({ silentAfter: 600 }).expectedDigestIntervalS).toBe(200);
    expect(findingSettingsOf({ silentAfter: 600, expectedDigestIntervalS: 3600, autoResolveAfterS: 60 })).toMatchObject({ expectedDigestIntervalS: 3600, autoResolveAfterS: 60 });
    expect(findingSettingsOf({ driftH: -1 }).driftH).toBe(5);
  });
});
