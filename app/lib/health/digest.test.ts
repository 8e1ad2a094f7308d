import { describe, expect, it } from "vitest";
import { assessLoopHealth, createDigestAccumulator, loadDisturbanceLimit } from "./index";

describe("digest accumulator", () => {
  it("computes the window statistics of the device API's digest", () => {
    const acc = createDigestAccumulator({ samplePeriod: 0.5, acceptableAmplitude: 1, ultimatePeriod: 20 });
    // errors 1, -1, 2, 0 (sp 10, pv 9, 11, 8, 10); u 0, 100, 50, 50
    acc.push(10, 9, 0, false, true, true);
    acc.push(10, 11, 100, true, false, true);
    acc.push(10, 8, 50, false, false, false);
    acc.push(12, 12, 50, false, false, false);
    const d = acc.flush()!;
    expect(d.samples).toBe(4);
    expect(d.spMean).toBeCloseTo(10.5, 12);
    expect(d.pvMean).toBeCloseTo(10, 12);
    expect(d.errMean).toBeCloseTo(0.5, 12);
    expect(d.errRms).toBeCloseTo(Math.sqrt(6 / 4), 12);
    expect(d.errMaxAbs).toBe(2);
    expect(d.iae).toBeCloseTo(4 * 0.5, 12);
    expect(d.ise).toBeCloseTo(6 * 0.5, 12);
    expect(d.uMean).toBeCloseTo(50, 12);
    expect(d.uStd).toBeCloseTo(Math.sqrt((2500 + 2500 + 0 + 0) / 4), 9);
    expect(d.satHighFrac).toBe(0.25);
    expect(d.satLowFrac).toBe(0.25);
    expect(d.intClampFrac).toBe(0.5);
    expect(d.spChanges).toBe(1);
    expect(acc.flush()).toBeNull();
  });

  it("uses Hägglund's IAE limit 2a/ωu", () => {
    // Hägglund 1995 (memory), derived: a = 1, Tu = 20 → ωu = π/10, IAE_lim = 20/π.
    expect(loadDisturbanceLimit(1, 20)).toBeCloseTo(6.366198, 6);
  });

  it("counts one load disturbance per half period of a large sine error", () => {
    // Derived: a sine error of amplitude 2 and period 20 s integrates to 4/ωu = 12.7324 per
    // half period, above IAE_lim = 6.3662, so each of the 20 crossings after the first counts.
    const h = 0.01;
    const acc = createDigestAccumulator({ samplePeriod: h, acceptableAmplitude: 1, ultimatePeriod: 20 });
    for (let k = 0; k < 20000; k++) acc.push(0, -2 * Math.sin((2 * Math.PI * (k + 0.5) * h) / 20), 0, false, false, false);
    const d = acc.flush()!;
    expect(d.oscCount).toBeGreaterThanOrEqual(19);
    expect(d.oscCount).toBeLessThanOrEqual(20);
    expect(d.iae).toBeCloseTo(20 * 12.7324, 0);
  });

  it("does not count a small sine error (amplitude 0.5 → 3.18 per half period < 6.37)", () => {
    const h = 0.01;
    const acc = createDigestAccumulator({ samplePeriod: h, acceptableAmplitude: 1, ultimatePeriod: 20 });
    for (let k = 0; k < 20000; k++) acc.push(0, 0.5 * Math.sin((2 * Math.PI * (k + 0.5) * h) / 20), 0, false, false, false);
    expect(acc.flush()!.oscCount).toBe(0);
  });
});

describe("loop health", () => {
  const thresholds = { acceptableAmplitude: 1, saturationWatch: 0.1, saturationAct: 0.3, clampWatch: 0.1, clampAct: 0.3, oscillationPerHour: 10, errRmsWatch: 2, silentAfter: 900 };
  const now = new Date("2026-01-01T12:00:00Z");
  const digest = (over: Partial<Parameters<typeof assessLoopHealth>[0][number]> = {}) => ({
    windowStart: new Date(now.getTime() - 360_000),
    windowEnd: new Date(now.getTime() - 60_000),
    samples: 300,
    errRms: 0.3,
    satHighFrac: 0,
    satLowFrac: 0,
    intClampFrac: 0,
    oscCount: 0,
    ...over,
  });

  it("is silent without recent digests", () => {
    expect(assessLoopHealth([], thresholds, now).band).toBe("silent");
    expect(assessLoopHealth([digest({ windowEnd: new Date(now.getTime() - 3600_000) })], thresholds, now).band).toBe("silent");
  });
  it("is steady for a quiet loop", () => {
    expect(assessLoopHealth([digest()], thresholds, now)).toEqual({ band: "steady", score: 100, reasons: [] });
  });
  it("flags saturation", () => {
    const a = assessLoopHealth([digest({ satHighFrac: 0.5 })], thresholds, now);
    expect(a.band).toBe("act");
    expect(a.reasons[0]).toMatch(/saturated 50 %/);
    expect(assessLoopHealth([digest({ satHighFrac: 0.15 })], thresholds, now).band).toBe("watch");
  });
});
