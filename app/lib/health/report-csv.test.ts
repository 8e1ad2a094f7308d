import Papa from "papaparse";
import { describe, expect, it } from "vitest";
import { HEALTH_REPORT_HEADER, healthReportCsv, type HealthReportRow } from "./report-csv";

const row: HealthReportRow = {
  customer: "Halden Plastics",
  site: "@north",
  machineSerial: '=HYPERLINK("http://evil.example","open")',
  loopKey: "zone2",
  loopName: "+Barrel zone 2",
  band: "act",
  score: 42,
  lastDigestAt: "2026-12-02T10:00:00.000Z",
  saturationShare24h: 0.234,
  saturationShare7d: 0.1,
  saturationSlopePerDay: 0.0125,
  projectedActAt: null,
  windupShare24h: 0.05,
  pinnedShare24h: null,
  oscillationPerHour: 0.5,
  oscillationLimitPerHour: 1.2,
  driftState: "in_control",
  openFindings: ["saturation (critical)", "-windup"],
};

describe("healthReportCsv", () => {
  const parsed = Papa.parse<string[]>(healthReportCsv([row]).trim(), { newline: "\r\n" }).data;

  it("writes the header and one row per loop", () => {
    expect(parsed[0]).toEqual(HEALTH_REPORT_HEADER);
    expect(parsed).toHaveLength(2);
  });

  it("neutralises cells a spreadsheet would run as a formula", () => {
    const [, cells] = parsed;
    expect(cells[2]).toBe(`'=HYPERLINK("http://evil.example","open")`);
    expect(cells[1]).toBe("'@north");
    expect(cells[4]).toBe("'+Barrel zone 2");
    expect(cells[17]).toBe("saturation (critical); -windup"); // starts with a letter: untouched
  });

  it("writes shares as whole percent and the slope in points a day", () => {
    const [, cells] = parsed;
    expect(cells[8]).toBe("23");
    expect(cells[9]).toBe("10");
    expect(cells[10]).toBe("1.3");
    expect(cells[13]).toBe("");
  });
});
