// The silence rule and band ranks, which SQL in app/.server/fleet/machines.ts writes out too.
import { describe, expect, it } from "vitest";
import { BAND_RANK, bandOfRank, DEFAULT_SILENT_AFTER_S, HEALTH_BANDS, isSilent, silentAssessment, worseBand } from "./index";
import { isSilentForInterval, lastDigestEnd, silentAfterSeconds } from "./silence";

const now = new Date("2026-12-02T12:00:00Z");
const ago = (s: number) => new Date(now.getTime() - s * 1000);

describe("the silence rule", () => {
  it("is silent without any digest, and past the template's limit but not at it", () => {
    expect(isSilent(null, 600, now)).toBe(true);
    expect(isSilent(ago(600), 600, now)).toBe(false);
    expect(isSilent(ago(601), 600, now)).toBe(true);
  });

  it("uses the default limit when the template sets none", () => {
    expect(isSilent(ago(DEFAULT_SILENT_AFTER_S), undefined, now)).toBe(false);
    expect(isSilent(ago(DEFAULT_SILENT_AFTER_S + 1), undefined, now)).toBe(true);
  });

  it("says why in words", () => {
    expect(silentAssessment(null)).toEqual({ band: "silent", score: null, reasons: ["No digest received yet."] });
    expect(silentAssessment(ago(5000)).reasons).toEqual(["No digest received recently."]);
  });
});

describe("band ranks", () => {
  it("orders steady < watch < act < silent and inverts", () => {
    expect(HEALTH_BANDS.map((b) => BAND_RANK[b])).toEqual([0, 1, 2, 3]);
    for (const band of HEALTH_BANDS) expect(bandOfRank(BAND_RANK[band])).toBe(band);
    expect(worseBand("watch", "act")).toBe("act");
    expect(worseBand("silent", "act")).toBe("silent");
  });
});

describe("silence by the expected digest interval (silence.ts)", () => {
  // Issue 12: silent after no digest for 3× the expected interval (the factor is practice).
  const cases = [
    { name: "one-minute digests, 180 s ago: not yet", interval: 60, agoS: 180, silent: false },
    { name: "one-minute digests, 181 s ago: silent", interval: 60, agoS: 181, silent: true },
    { name: "ten-minute digests, 29 min ago: not yet", interval: 600, agoS: 1740, silent: false },
    { name: "ten-minute digests, 31 min ago: silent", interval: 600, agoS: 1860, silent: true },
  ];
  it.each(cases)("$name", ({ interval, agoS, silent }) => {
    expect(silentAfterSeconds(interval)).toBe(3 * interval);
    expect(isSilentForInterval(ago(agoS), interval, now)).toBe(silent);
  });

  it("is silent without any digest, and finds the last window ended by now", () => {
    expect(isSilentForInterval(null, 60, now)).toBe(true);
    const windows = [{ windowEnd: ago(300) }, { windowEnd: ago(100) }, { windowEnd: ago(-50) }];
    expect(lastDigestEnd(windows, now)).toEqual(ago(100));
    expect(lastDigestEnd([], now)).toBeNull();
  });
});
