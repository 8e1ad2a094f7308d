// Held and pinned integrator shares (windup.ts header; Fréchet bounds, derived).
import { describe, expect, it } from "vitest";
import { HOUR_MS } from "./series";
import { makeDigest } from "./test-support";
import { assessWindup, windowPinnedLowerBound, windowPinnedShare } from "./windup";

const now = new Date("2026-12-02T12:00:00Z");
const at = (msBefore: number) => new Date(now.getTime() - msBefore);

describe("one window's pinned share", () => {
  // Derived: estimate min(a, b); lower bound max(0, a + b − 1), a held, b = high + low saturated.
  const cases = [
    { name: "held inside saturation (clamping): the held share", held: 0.2, high: 0.3, low: 0, pinned: 0.2, lower: 0 },
    { name: "saturated less than held: the saturated share", held: 0.5, high: 0.1, low: 0.1, pinned: 0.2, lower: 0 },
    { name: "both large: the bounds meet the overlap they force", held: 0.9, high: 0.6, low: 0.2, pinned: 0.8, lower: 0.7 },
    { name: "held, never saturated: nothing pinned", held: 0.4, high: 0, low: 0, pinned: 0, lower: 0 },
    { name: "saturated, never held: nothing pinned", held: 0, high: 1, low: 0, pinned: 0, lower: 0 },
  ];
  it.each(cases)("$name", ({ held, high, low, pinned, lower }) => {
    const d = { intClampFrac: held, satHighFrac: high, satLowFrac: low };
    expect(windowPinnedShare(d)).toBeCloseTo(pinned, 12);
    expect(windowPinnedLowerBound(d)).toBeCloseTo(lower, 12);
  });
});

describe("windup over 24 h", () => {
  it("weights windows by their samples and leaves out older windows", () => {
    const digests = [
      makeDigest(at(2 * HOUR_MS), 60, { intClampFrac: 0.5, satHighFrac: 0.5 }), // held 30, pinned 30
      makeDigest(at(HOUR_MS), 120, { intClampFrac: 0.25, satLowFrac: 0.1 }), // held 30, pinned 12
      makeDigest(at(30 * HOUR_MS), 600, { intClampFrac: 1, satHighFrac: 1 }), // older than 24 h
    ];
    const figures = assessWindup(digests, now);
    // Derived: held (30 + 30)/180; pinned (30 + 12)/180; lower bound 0 (a + b ≤ 1 in each window).
    expect(figures.share24h).toBeCloseTo(60 / 180, 12);
    expect(figures.pinnedShare24h).toBeCloseTo(42 / 180, 12);
    expect(figures.pinnedLowerBound24h).toBe(0);
  });

  it("is null without windows", () => {
    expect(assessWindup([], now)).toEqual({ share24h: null, pinnedShare24h: null, pinnedLowerBound24h: null });
  });
});
