// The figures of issue 12's loop-health API from one call, and their independence of arrival order.
import { describe, expect, it } from "vitest";
import { loopHealthFigures, type LoopHealthFigureSettings } from "./index";
import { DAY_MS } from "./series";
import { makeDigest, seededNormal, seededRandom, shuffled } from "./test-support";

const now = new Date("2026-12-02T12:00:00Z");
// Practice values as the demo's barrel zones (REFERENCES.md): act at 20 % saturation, Tu = 160 s → 4.5 per hour.
const settings: LoopHealthFigureSettings = { saturationAct: 0.2, oscillationPerHour: 4.5 };

/** 14 days of 10-minute windows: a rising saturation with outliers, clamping, detections, a gain change 2 days ago, IAE rising after it. */
function history() {
  const random = seededRandom(5);
  const normal = seededNormal(5);
  const start = now.getTime() - 14 * DAY_MS;
  const digests = [];
  for (let t = start, i = 0; t < now.getTime(); t += 600_000, i++) {
    const day = (t - start) / DAY_MS;
    const retuned = t >= now.getTime() - 2 * DAY_MS;
    const sat = random() < 0.1 ? 0.8 : 0.02 + 0.008 * day;
    digests.push(
      makeDigest(new Date(t), 600, {
        satHighFrac: sat * 0.7,
        satLowFrac: sat * 0.3,
        intClampFrac: sat * 0.6,
        oscCount: random() < 0.05 ? 1 : 0,
        gainVersion: retuned ? 4 : 3,
        iae: 600 * Math.max(0, (retuned && t > now.getTime() - DAY_MS ? 1.5 : 1) + 0.2 * normal()),
      }),
    );
  }
  return digests;
}

describe("loopHealthFigures", () => {
  const digests = history();
  const figures = loopHealthFigures(digests, settings, now);

  it("answers the API's shape with every figure filled", () => {
    expect(Object.keys(figures).sort()).toEqual(["drift", "oscillation", "saturation", "windup"]);
    expect(Object.keys(figures.saturation).sort()).toEqual(["projectedActAt", "share24h", "share7d", "slopePerDay"]);
    expect(Object.keys(figures.windup).sort()).toEqual(["pinnedShare24h", "share24h"]);
    expect(Object.keys(figures.oscillation).sort()).toEqual(["detectionsPerHour", "limitPerHour"]);
    expect(Object.keys(figures.drift).sort()).toEqual(["baselineMean", "baselineStd", "cusumHigh", "cusumLow", "limit", "sinceGainVersion", "state"]);
    expect(figures.saturation.slopePerDay).toBeGreaterThan(0.006);
    expect(figures.saturation.projectedActAt!.getTime()).toBeGreaterThan(now.getTime());
    // Clamping inside saturation (0.6 of it): the pinned share is the held share (windup.ts).
    expect(figures.windup.pinnedShare24h).toBeCloseTo(figures.windup.share24h!, 12);
    expect(figures.oscillation.limitPerHour).toBe(4.5);
    // A 50 % rise in IAE a day after the gain change, noise 0.2: 2.5 std, drifting on the high side.
    expect(figures.drift).toMatchObject({ state: "drifting", sinceGainVersion: 4, limit: 5 });
    expect(figures.drift.cusumHigh).toBeGreaterThan(5);
  });

  it.each([1, 2, 3])("gives the same figures for the same digests in shuffled arrival order (seed %i)", (seed) => {
    expect(loopHealthFigures(shuffled(digests, seed), settings, now)).toEqual(figures);
  });

  it("a live stream seen at its end equals the backfill", () => {
    // Arrival in window order one at a time, as live, then judged at now: the same as the shuffled backfill.
    const live: typeof digests = [];
    for (const d of digests) live.push(d);
    expect(loopHealthFigures(live, settings, now)).toEqual(loopHealthFigures(shuffled(digests, 9), settings, now));
  });

  it("takes the drift settings from the template when set", () => {
    const strict = loopHealthFigures(digests, { ...settings, driftBaselineWindows: 500 }, now);
    // Derived: 2 days of 10-minute windows is 288 < 500, so still learning.
    expect(strict.drift).toMatchObject({ state: "learning", baselineMean: null, cusumHigh: 0 });
    expect(loopHealthFigures(digests, { ...settings, driftH: 1e9 }, now).drift).toMatchObject({ state: "in_control", limit: 1e9 });
  });

  it("is empty but well formed without digests", () => {
    expect(loopHealthFigures([], settings, now)).toEqual({
      saturation: { share24h: null, share7d: null, slopePerDay: null, projectedActAt: null },
      windup: { share24h: null, pinnedShare24h: null },
      oscillation: { detectionsPerHour: null, limitPerHour: 4.5 },
      drift: { state: "learning", baselineMean: null, baselineStd: null, cusumHigh: 0, cusumLow: 0, limit: 5, sinceGainVersion: null },
    });
  });
});
