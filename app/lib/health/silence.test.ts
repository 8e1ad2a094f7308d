// The silence rule and band ranks, which SQL in app/.server/fleet/machines.ts writes out too.
import { describe, expect, it } from "vitest";
import { BAND_RANK, bandOfRank, DEFAULT_SILENT_AFTER_S, HEALTH_BANDS, isSilent, silentAssessment, worseBand } from "./index";

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
