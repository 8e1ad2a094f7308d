// Saturation share and its Theil–Sen trend (REFERENCES.md in this folder, "Theil 1950 / Sen 1968").
import { describe, expect, it } from "vitest";
import { assessSaturation, hourlySaturation, theilSen, type TrendPoint } from "./saturation";
import { DAY_MS, HOUR_MS } from "./series";
import { makeDigest, seededRandom } from "./test-support";

const now = new Date("2026-12-02T12:00:00Z");
const at = (msBefore: number) => new Date(now.getTime() - msBefore);

/** Independent Theil–Sen: every ordered pair (i ≠ j, so each slope twice), sorted, middle by hand. */
function bruteForceTheilSen(xs: number[], ys: number[]): { slope: number; intercept: number } {
  const middle = (values: number[]) => {
    const s = [...values].sort((a, b) => a - b);
    const n = s.length;
    return n % 2 === 1 ? s[(n - 1) / 2] : (s[n / 2 - 1] + s[n / 2]) / 2;
  };
  const slopes: number[] = [];
  xs.forEach((xi, i) => xs.forEach((xj, j) => i !== j && xi !== xj && slopes.push((ys[j] - ys[i]) / (xj - xi))));
  const slope = middle(slopes);
  return { slope, intercept: middle(xs.map((x, i) => ys[i] - slope * x)) };
}

/** Ordinary least squares, for contrast. */
function leastSquares(xs: number[], ys: number[]): { slope: number; intercept: number } {
  const n = xs.length;
  const mx = xs.reduce((a, b) => a + b, 0) / n;
  const my = ys.reduce((a, b) => a + b, 0) / n;
  let sxy = 0;
  let sxx = 0;
  xs.forEach((x, i) => {
    sxy += (x - mx) * (ys[i] - my);
    sxx += (x - mx) ** 2;
  });
  const slope = sxy / sxx;
  return { slope, intercept: my - slope * mx };
}

describe("saturation share over 24 h and 7 d", () => {
  // Derived by hand: shares weighted by each window's samples.
  const cases = [
    {
      name: "sample-weighted, high and low limits both count",
      digests: [
        makeDigest(at(2 * HOUR_MS), 60, { satHighFrac: 0.5 }), // 30 of 60 samples
        makeDigest(at(1 * HOUR_MS), 180, { satLowFrac: 0.1, satHighFrac: 0.1 }), // 36 of 180
      ],
      share24h: (30 + 36) / 240,
      share7d: (30 + 36) / 240,
    },
    {
      name: "a window that ended 3 days ago counts in 7 d only",
      digests: [makeDigest(at(3 * DAY_MS), 100, { satHighFrac: 1 }), makeDigest(at(HOUR_MS), 100, { satHighFrac: 0 })],
      share24h: 0,
      share7d: 0.5,
    },
    { name: "no windows: null", digests: [], share24h: null, share7d: null },
    {
      name: "a window ending after now is ignored",
      digests: [makeDigest(at(-HOUR_MS), 100, { satHighFrac: 1 }), makeDigest(at(HOUR_MS), 100, { satLowFrac: 0.2 })],
      share24h: 0.2,
      share7d: 0.2,
    },
  ];
  it.each(cases)("$name", ({ digests, share24h, share7d }) => {
    const figures = assessSaturation(digests, 0.2, now);
    if (share24h === null) expect(figures.share24h).toBeNull();
    else expect(figures.share24h).toBeCloseTo(share24h, 12);
    if (share7d === null) expect(figures.share7d).toBeNull();
    else expect(figures.share7d).toBeCloseTo(share7d, 12);
  });
});

describe("Theil–Sen slope", () => {
  it("matches the reference series computed with scipy.stats.theilslopes, where least squares does not", () => {
    // REFERENCES.md, "Theil 1950 / Sen 1968" (computed with scipy): slope 0.012, least squares 0.00715.
    const values = [0.1, 0.12, 0.11, 0.15, 0.9, 0.16, 0.18, 0.17, 0.21, 0.2];
    const points: TrendPoint[] = values.map((value, day) => ({ day, value }));
    expect(theilSen(points)!.slope).toBeCloseTo(0.012, 12);
    expect(leastSquares(points.map((p) => p.day), values).slope).toBeCloseTo(0.00715, 5);
  });

  it("is null with fewer than two points", () => {
    expect(theilSen([])).toBeNull();
    expect(theilSen([{ day: 1, value: 0.3 }])).toBeNull();
  });
});

/**
 * 14 days of half-hour windows; the share rises 0.01 a day from 0.02 (plus seeded noise of up to
 * ±noise); one hour in ten (seeded) is an outlier at 0.9 (a start-up, a door left open).
 */
function ramp(noise: number) {
  const random = seededRandom(12);
  const start = now.getTime() - 14 * DAY_MS;
  const digests = [];
  for (let h = 0; h < 14 * 24; h++) {
    const outlier = random() < 0.1;
    const wobble = noise * (2 * random() - 1);
    const share = outlier ? 0.9 : 0.02 + 0.01 * ((h + 0.5) / 24) + wobble;
    for (const half of [0, 1]) digests.push(makeDigest(new Date(start + h * HOUR_MS + half * 1_800_000), 1800, { satHighFrac: share }));
  }
  return { digests, start, startDay: start / DAY_MS };
}

describe("a saturation ramp with 10 % outlier windows (act limit 0.2)", () => {
  const crossing = (line: { slope: number; intercept: number }) => new Date(((0.2 - line.intercept) / line.slope) * DAY_MS);
  const fit = (digests: ReturnType<typeof ramp>["digests"]) => {
    const hourly = hourlySaturation(digests, now);
    const xs = hourly.map((p) => p.day);
    const ys = hourly.map((p) => p.value);
    return { hourly, figures: assessSaturation(digests, 0.2, now), brute: bruteForceTheilSen(xs, ys), ols: leastSquares(xs, ys), outliers: ys.filter((y) => y > 0.5).length };
  };

  it("has about 10 % outlier hours", () => {
    const { hourly, outliers } = fit(ramp(0).digests);
    expect(hourly).toHaveLength(336);
    expect(outliers / 336).toBeGreaterThan(0.07);
    expect(outliers / 336).toBeLessThan(0.13);
  });

  it("with noise: Theil–Sen slope and crossing time equal an independent brute-force median over all pairs", () => {
    const { figures, brute, ols, outliers } = fit(ramp(0.004).digests);
    console.log(
      `saturation ramp ±0.004 noise, ${outliers} outlier hours of 336: Theil–Sen ${figures.slopePerDay!.toFixed(6)}/day, act at ${figures.projectedActAt!.toISOString()}; ` +
        `brute-force pairs ${brute.slope.toFixed(6)}/day, act at ${crossing(brute).toISOString()}; least squares ${ols.slope.toFixed(6)}/day, act at ${crossing(ols).toISOString()}`,
    );
    // Independent computation (this test's bruteForceTheilSen over all ordered pairs), same definition: Theil 1950 / Sen 1968.
    expect(figures.slopePerDay).toBeCloseTo(brute.slope, 12);
    expect(Math.abs(figures.projectedActAt!.getTime() - crossing(brute).getTime())).toBeLessThan(1);
    // Both near the true 0.01/day; least squares visibly lower.
    expect(figures.slopePerDay).toBeCloseTo(0.01, 3);
    expect(Math.abs(ols.slope - 0.01)).toBeGreaterThan(0.001);
  });

  it("without noise: recovers the true ramp exactly, where least squares is days off", () => {
    const { startDay } = ramp(0);
    const { figures, brute, ols } = fit(ramp(0).digests);
    const trueCrossing = new Date((startDay + 18) * DAY_MS);
    console.log(
      `saturation ramp, no noise: Theil–Sen ${figures.slopePerDay!.toFixed(6)}/day, act at ${figures.projectedActAt!.toISOString()}; ` +
        `brute-force pairs ${brute.slope.toFixed(6)}/day; least squares ${ols.slope.toFixed(6)}/day, act at ${crossing(ols).toISOString()}; true 0.010000/day, act at ${trueCrossing.toISOString()}`,
    );
    // Derived: over 80 % of pairs join two clean hours and have slope exactly 0.01, so the median
    // is 0.01; the line reaches 0.2 at (0.2 − 0.02)/0.01 = 18 days after the start, 4 days from now.
    expect(figures.slopePerDay).toBeCloseTo(0.01, 9);
    expect(Math.abs(figures.projectedActAt!.getTime() - trueCrossing.getTime())).toBeLessThan(60_000);
    // Least squares: the outliers lift the line by about 0.09, so its crossing is days early.
    expect(Math.abs(crossing(ols).getTime() - trueCrossing.getTime())).toBeGreaterThan(2 * DAY_MS);
  });

  it("projects nothing when the share is flat or falling, and now when already past the limit", () => {
    const { digests, start } = ramp(0);
    const flat = digests.map((d) => ({ ...d, satHighFrac: 0.05 }));
    expect(assessSaturation(flat, 0.2, now)).toMatchObject({ slopePerDay: 0, projectedActAt: null });
    const falling = digests.map((d) => ({ ...d, satHighFrac: 0.3 - (d.windowStart.getTime() - start) / (100 * DAY_MS) }));
    expect(assessSaturation(falling, 0.2, now).slopePerDay).toBeLessThan(0);
    expect(assessSaturation(falling, 0.2, now).projectedActAt).toBeNull();
    // Rising and the fitted line already over 0.1 now: crossed, so the time is now.
    expect(assessSaturation(digests, 0.1, now).projectedActAt).toEqual(now);
  });
});
