// Hägglund's oscillation rule (REFERENCES.md, "Load-disturbance detection and oscillation", Hägglund 1995, memory).
import { describe, expect, it } from "vitest";
import { assessOscillation, oscillationLimitFromTu } from "./oscillation";
import { makeDigest } from "./test-support";

const now = new Date("2026-12-02T12:00:00Z");
// Tu = 160 s → limit 720/160 = 4.5 per hour, Tsup = 50·160 = 8000 s (derived, REFERENCES.md).
const tu = 160;
const limit = oscillationLimitFromTu(tu);

/** Minute windows covering the last `seconds` before now, detections spread one per window from the newest. */
function minutes(seconds: number, detections: number) {
  const n = Math.floor(seconds / 60);
  return Array.from({ length: n }, (_, i) => makeDigest(new Date(now.getTime() - (i + 1) * 60_000), 60, { oscCount: i < detections ? 1 : 0 }));
}

describe("Hägglund's rule at the counts", () => {
  it("has the limit 4.5 per hour and Tsup 8000 s for Tu = 160 s", () => {
    expect(limit).toBeCloseTo(4.5, 12);
    expect(assessOscillation([], limit, now)).toMatchObject({ detectionsPerHour: null, supervisionSeconds: 8000, oscillating: false });
  });

  const cases = [
    // Hägglund 1995 (memory): more than 10 within Tsup. 10 → 10·3600/8000 = 4.5 per hour, at the limit, not over it.
    { detections: 10, oscillating: false, perHour: 4.5 },
    // 11 → 4.95 per hour, over.
    { detections: 11, oscillating: true, perHour: 4.95 },
    { detections: 0, oscillating: false, perHour: 0 },
  ];
  it.each(cases)("$detections detections within 50·Tu: oscillating $oscillating", ({ detections, oscillating, perHour }) => {
    const figures = assessOscillation(minutes(8000, detections), limit, now);
    expect(figures.detections).toBe(detections);
    expect(figures.oscillating).toBe(oscillating);
    expect(figures.detectionsPerHour).toBeCloseTo(perHour, 12);
    expect(figures.detectionsPerHour! > limit).toBe(oscillating);
  });

  it("counts only the last 50·Tu of windows", () => {
    // 11 detections, but the oldest 2 lie before the last 8000 s: 9 count.
    const inside = minutes(8000, 0).map((d, i) => (i < 9 ? { ...d, oscCount: 1 } : d));
    const before = [1, 2].map((k) => makeDigest(new Date(now.getTime() - 8000_000 - k * 60_000), 60, { oscCount: 1 }));
    const figures = assessOscillation([...inside, ...before], limit, now);
    expect(figures.detections).toBe(9);
    expect(figures.oscillating).toBe(false);
  });

  it("never extrapolates from less observed time: 11 detections in 10 minutes are 11 per Tsup", () => {
    // Derived: 11·3600/8000 = 4.95 per hour, not 11·6 = 66.
    // Ten minute windows holding 11 detections (the newest has two).
    const figures = assessOscillation(minutes(600, 10).map((d, i) => (i === 0 ? { ...d, oscCount: 2 } : d)), limit, now);
    expect(figures.detections).toBe(11);
    expect(figures.observedSeconds).toBe(600);
    expect(figures.detectionsPerHour).toBeCloseTo(4.95, 12);
    // And 11 seen within Tsup is already more than 10 within it.
    expect(figures.oscillating).toBe(true);
  });

  it("anchors at the latest window, ignoring windows after now", () => {
    const late = new Date(now.getTime() - 3_600_000);
    const digests = minutes(8000, 11).map((d) => ({ ...d, windowStart: new Date(d.windowStart.getTime() - 3_600_000), windowEnd: new Date(d.windowEnd.getTime() - 3_600_000) }));
    const future = makeDigest(now, 60, { oscCount: 50 });
    const figures = assessOscillation([...digests, future], limit, now);
    expect(digests[0].windowEnd).toEqual(late);
    expect(figures.detections).toBe(11);
    expect(figures.oscillating).toBe(true);
  });
});
