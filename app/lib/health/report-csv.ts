// A health report as CSV: one row per loop, shares in whole percent, every cell through
// `toCsv` (formula cells neutralised, so a serial or site name cannot run in a spreadsheet).
import { toCsv } from "~/lib/csv";
import type { HealthBand } from "./assess";

export type HealthReportRow = {
  customer: string;
  site: string;
  machineSerial: string;
  loopKey: string;
  loopName: string;
  band: HealthBand;
  score: number | null;
  lastDigestAt: string | null;
  saturationShare24h: number | null;
  saturationShare7d: number | null;
  saturationSlopePerDay: number | null;
  projectedActAt: string | null;
  windupShare24h: number | null;
  pinnedShare24h: number | null;
  oscillationPerHour: number | null;
  oscillationLimitPerHour: number | null;
  driftState: string;
  openFindings: string[];
};

export const HEALTH_REPORT_HEADER = [
  "Customer",
  "Site",
  "Machine",
  "Loop key",
  "Loop",
  "Band",
  "Score (0-100)",
  "Last digest (UTC)",
  "At output limit 24 h (%)",
  "At output limit 7 d (%)",
  "Saturation trend (points/day)",
  "Projected act date (UTC)",
  "Integrator held 24 h (%)",
  "Held while saturated 24 h (%)",
  "Oscillation (detections/h)",
  "Oscillation limit (detections/h)",
  "Drift",
  "Open findings",
];

const pct = (v: number | null) => (v === null || !Number.isFinite(v) ? "" : String(Math.round(v * 100)));
const num = (v: number | null, digits = 3) => (v === null || !Number.isFinite(v) ? "" : String(Number(v.toPrecision(digits))));

export function healthReportCsv(rows: readonly HealthReportRow[]): string {
  return toCsv(
    HEALTH_REPORT_HEADER,
    rows.map((r) => [
      r.customer,
      r.site,
      r.machineSerial,
      r.loopKey,
      r.loopName,
      r.band,
      r.score === null ? "" : String(r.score),
      r.lastDigestAt ?? "",
      pct(r.saturationShare24h),
      pct(r.saturationShare7d),
      r.saturationSlopePerDay === null ? "" : num(r.saturationSlopePerDay * 100, 2),
      r.projectedActAt ?? "",
      pct(r.windupShare24h),
      pct(r.pinnedShare24h),
      num(r.oscillationPerHour),
      num(r.oscillationLimitPerHour),
      r.driftState,
      r.openFindings.join("; "),
    ]),
  );
}
