import { describe, expect, it } from "vitest";
import { describeGuardRule, evaluateGuard, iaeRatios, median, type LoopIae } from "./guard";

const loops = (prefix: string, ratios: number[], baseline = 2): LoopIae[] => ratios.map((r, i) => ({ loopId: `${prefix}${i}`, baseline, after: baseline * r }));
const quiet = { total: 10, rejected: 0 };

describe("median and ratios", () => {
  it("median of odd and even counts", () => {
    expect(median([3, 1, 2])).toBe(2);
    expect(median([4, 1, 3, 2])).toBe(2.5);
    expect(median([])).toBeNull();
  });
  it("leaves out loops without a usable baseline or after-value", () => {
    expect(iaeRatios([{ loopId: "a", baseline: 0, after: 1 }, { loopId: "b", baseline: null, after: 1 }, { loopId: "c", baseline: 2, after: null }, { loopId: "d", baseline: 2, after: 3 }])).toEqual([1.5]);
  });
});

describe("evaluateGuard", () => {
  it("does not hold when pilot and control change alike", () => {
    const d = evaluateGuard({ pilot: loops("p", [1.0, 1.1, 0.9, 1.05, 0.95]), control: loops("c", [1.0, 1.02, 0.98, 1.1, 0.9]), devices: quiet, criticalLoopIds: [] });
    expect(d.hold).toBe(false);
    expect(d.reason).toBeNull();
    expect(d.figures.pilotMedian).toBe(1.0);
    expect(d.figures.controlMedian).toBe(1.0);
    expect(d.figures.increase).toBeCloseTo(0, 12);
  });

  it("holds when the pilot median is more than 20 % above the control median and the test agrees (exact p = 0.0021645)", () => {
    const d = evaluateGuard({ pilot: loops("p", [1.2, 1.35, 1.5, 1.1, 1.42]), control: loops("c", [1.0, 0.95, 1.05, 0.9, 1.02, 0.98]), devices: quiet, criticalLoopIds: [] });
    expect(d.figures.pilotMedian).toBeCloseTo(1.35, 12);
    expect(d.figures.controlMedian).toBeCloseTo(0.99, 12);
    expect(d.figures.test.applied && d.figures.test.p).toBeCloseTo(0.0021645021645, 10);
    expect(d.hold).toBe(true);
    expect(d.reason).toMatch(/36 % above the control group's/);
    expect(d.reason).toMatch(/Mann–Whitney/);
  });

  it("does not hold on a median jump the test calls noise (p = 0.0628 ≥ 0.05)", () => {
    // Pilot median 1.2 vs control 0.99 (+21 %), but one pilot loop improved a lot.
    const d = evaluateGuard({ pilot: loops("p", [1.2, 1.35, 0.5, 1.1, 1.42]), control: loops("c", [1.0, 0.95, 1.05, 0.9, 1.02, 0.98]), devices: quiet, criticalLoopIds: [] });
    expect(d.figures.increase!).toBeGreaterThan(0.2);
    expect(d.figures.test.applied && d.figures.test.p).toBeCloseTo(0.0627705627706, 10);
    expect(d.hold).toBe(false);
  });

  it("with fewer than 5 pilot loops the median rule decides alone", () => {
    const d = evaluateGuard({ pilot: loops("p", [1.5, 1.6]), control: loops("c", [1.0, 1.0, 1.0, 1.0, 1.0]), devices: quiet, criticalLoopIds: [] });
    expect(d.figures.test.applied).toBe(false);
    expect(d.hold).toBe(true);
    const e = evaluateGuard({ pilot: loops("p", [1.15, 1.18]), control: loops("c", [1.0, 1.0, 1.0]), devices: quiet, criticalLoopIds: [] });
    expect(e.hold).toBe(false);
  });

  it("without control loops compares with the pilot loops' own baseline (ratio 1)", () => {
    expect(evaluateGuard({ pilot: loops("p", [1.3, 1.25]), control: [], devices: quiet, criticalLoopIds: [] }).hold).toBe(true);
    expect(evaluateGuard({ pilot: loops("p", [1.1, 1.05]), control: [], devices: quiet, criticalLoopIds: [] }).hold).toBe(false);
  });

  it("a release's own guard replaces the default", () => {
    const input = { pilot: loops("p", [1.3, 1.3]), control: loops("c", [1, 1]), devices: quiet, criticalLoopIds: [] };
    expect(evaluateGuard(input).hold).toBe(true);
    expect(evaluateGuard({ ...input, settings: { maxIaeIncrease: 0.5 } }).hold).toBe(false);
  });

  it("holds when more than 10 % of pilot devices reject (2 of 10 yes, 1 of 10 no)", () => {
    const calm = { pilot: loops("p", [1, 1]), control: [], criticalLoopIds: [] };
    const d = evaluateGuard({ ...calm, devices: { total: 10, rejected: 2 } });
    expect(d.hold).toBe(true);
    expect(d.figures.rejectShare).toBeCloseTo(0.2, 12);
    expect(d.reason).toMatch(/2 of 10 pilot devices/);
    expect(evaluateGuard({ ...calm, devices: { total: 10, rejected: 1 } }).hold).toBe(false);
  });

  it("holds when a pilot loop has an open critical finding", () => {
    const d = evaluateGuard({ pilot: loops("p", [1, 1]), control: [], devices: quiet, criticalLoopIds: ["p0"] });
    expect(d.hold).toBe(true);
    expect(d.reason).toMatch(/critical finding/);
  });

  it("no figures yet: does not hold and says so in the figures", () => {
    const d = evaluateGuard({ pilot: [{ loopId: "p", baseline: 1, after: null }], control: [], devices: { total: 0, rejected: 0 }, criticalLoopIds: [] });
    expect(d.hold).toBe(false);
    expect(d.figures.pilotMedian).toBeNull();
    expect(d.figures.rejectShare).toBeNull();
  });

  it("states the rule in words with the release's settings", () => {
    expect(describeGuardRule({ maxIaeIncrease: 0.3, maxRejectShare: 0.05 })).toMatch(/more than 5 % of pilot devices.*more than 30 % above/);
  });
});
