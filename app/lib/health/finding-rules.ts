/**
 * From a loop's figures to findings: for each kind, whether it trips now, at which severity,
 * and the evidence (the figure, the threshold it crossed, the window judged). Pure.
 *
 * Severity (DESIGN.md section 2): a figure past the template's watch limit is `warning`, past
 * its act limit `critical` (the same limits as the score table in assess.ts); `info` is used for
 * what needs no action yet: saturation below watch but rising to the act limit within the
 * horizon, and drift towards a *smaller* IAE (the baseline is stale, not the loop bad).
 * Every setting here lives on the loop template (thresholds JSON) with a default below, tagged
 * in REFERENCES.md ("Findings").
 */
import type { FindingEvidence, FindingKind, FindingSeverity } from "./api-types";
import { DEFAULT_SILENT_AFTER_S, type HealthThresholdSettings } from "./assess";
import { DEFAULT_DRIFT_SETTINGS, type DriftFigures } from "./drift";
import type { LoopHealthFigures } from "./figures";
import { DAY_MS } from "./series";
import { SILENCE_INTERVALS } from "./silence";

/** The template settings findings use beyond the score table's (all optional on a template). */
export type FindingSettings = {
  /** Seconds between a loop's digests; silent after 3× (silence.ts). Default 300 (practice: the 900 s silence of assess.ts). */
  expectedDigestIntervalS: number;
  /** A silent finding is critical after this many seconds. Default one day (practice). */
  silentCriticalAfterS: number;
  /** An open finding whose condition has been clear this long resolves itself. Default 6 h (practice). */
  autoResolveAfterS: number;
  /** Saturation below watch rising to the act limit within this many days opens an info finding. Default 7 (practice). */
  saturationHorizonDays: number;
  driftBaselineWindows: number;
  driftK: number;
  driftH: number;
};

export const DEFAULT_FINDING_SETTINGS: FindingSettings = {
  expectedDigestIntervalS: DEFAULT_SILENT_AFTER_S / SILENCE_INTERVALS,
  silentCriticalAfterS: 86_400,
  autoResolveAfterS: 6 * 3600,
  saturationHorizonDays: 7,
  driftBaselineWindows: DEFAULT_DRIFT_SETTINGS.baselineWindows,
  driftK: DEFAULT_DRIFT_SETTINGS.k,
  driftH: DEFAULT_DRIFT_SETTINGS.h,
};

export type TemplateHealthSettings = HealthThresholdSettings & FindingSettings;

/** A template's stored thresholds with every finding setting filled in (stored values win). */
export function findingSettingsOf(stored: Partial<TemplateHealthSettings>): FindingSettings {
  const pick = <K extends keyof FindingSettings>(key: K) => {
    const value = stored[key];
    return typeof value === "number" && Number.isFinite(value) && value > 0 ? value : DEFAULT_FINDING_SETTINGS[key];
  };
  const silentAfter = typeof stored.silentAfter === "number" && stored.silentAfter > 0 ? stored.silentAfter : undefined;
  return {
    expectedDigestIntervalS: typeof stored.expectedDigestIntervalS === "number" && stored.expectedDigestIntervalS > 0
      ? stored.expectedDigestIntervalS
      : silentAfter
        ? silentAfter / SILENCE_INTERVALS
        : DEFAULT_FINDING_SETTINGS.expectedDigestIntervalS,
    silentCriticalAfterS: pick("silentCriticalAfterS"),
    autoResolveAfterS: pick("autoResolveAfterS"),
    saturationHorizonDays: pick("saturationHorizonDays"),
    driftBaselineWindows: pick("driftBaselineWindows"),
    driftK: pick("driftK"),
    driftH: pick("driftH"),
  };
}

/** What the job decided for one kind: trips (with severity and evidence), is clear, or cannot be judged. */
export type FindingJudgement =
  | { kind: FindingKind; status: "trip"; severity: FindingSeverity; summary: string; evidence: FindingEvidence }
  | { kind: FindingKind; status: "clear" }
  | { kind: FindingKind; status: "unknown" };

const pct = (v: number) => `${Math.round(v * 100)} %`;
const iso = (d: Date | null) => (d ? d.toISOString() : null);

export type JudgeInput = {
  figures: LoopHealthFigures;
  /** assessDrift's first signal (the window that tripped drift), when there is one. */
  driftFirstSignalAt: Date | null;
  thresholds: Pick<HealthThresholdSettings, "saturationWatch" | "saturationAct" | "clampWatch" | "clampAct">;
  settings: FindingSettings;
  lastDigestEnd: Date | null;
  now: Date;
};

/** The five evaluated kinds (config_rejected is opened by the release path, never judged here). */
export function judgeLoop(input: JudgeInput): FindingJudgement[] {
  const { figures, thresholds, settings, lastDigestEnd, now } = input;
  const silentAfterS = SILENCE_INTERVALS * settings.expectedDigestIntervalS;
  const quietS = lastDigestEnd ? (now.getTime() - lastDigestEnd.getTime()) / 1000 : null;
  const silent = quietS === null || quietS > silentAfterS;
  const out: FindingJudgement[] = [];
  // A loop that never sent a digest is not judged at all (a machine not yet installed).
  if (!lastDigestEnd) return (["silent", "saturation", "windup", "oscillation", "drift"] as const).map((kind) => ({ kind, status: "unknown" }));

  if (silent) {
    const severity: FindingSeverity = quietS === null || quietS > settings.silentCriticalAfterS ? "critical" : "warning";
    out.push({
      kind: "silent",
      status: "trip",
      severity,
      summary: lastDigestEnd ? `No digest for ${formatSpan(quietS!)} (expected every ${formatSpan(settings.expectedDigestIntervalS)}).` : "No digest received yet.",
      evidence: {
        metric: "silence.secondsSinceDigest",
        value: quietS,
        threshold: silentAfterS,
        unit: "s",
        windowStart: iso(lastDigestEnd),
        windowEnd: now.toISOString(),
        figures: { lastDigestAt: iso(lastDigestEnd), expectedIntervalS: settings.expectedDigestIntervalS },
      },
    });
    // Nothing else can be judged on a silent loop: open findings stay as they are.
    for (const kind of ["saturation", "windup", "oscillation", "drift"] as const) out.push({ kind, status: "unknown" });
    return out;
  }
  out.push({ kind: "silent", status: "clear" });
  const dayWindow = { windowStart: new Date(now.getTime() - DAY_MS).toISOString(), windowEnd: iso(lastDigestEnd) };

  // Saturation: share of the last 24 h at an output limit; info when still below watch but rising.
  const sat = figures.saturation;
  if (sat.share24h === null) out.push({ kind: "saturation", status: "unknown" });
  else {
    const satFigures = { share24h: sat.share24h, share7d: sat.share7d, slopePerDay: sat.slopePerDay, projectedActAt: iso(sat.projectedActAt) };
    const severity: FindingSeverity | null =
      sat.share24h >= thresholds.saturationAct
        ? "critical"
        : sat.share24h >= thresholds.saturationWatch
          ? "warning"
          : sat.projectedActAt && sat.projectedActAt.getTime() - now.getTime() <= settings.saturationHorizonDays * DAY_MS
            ? "info"
            : null;
    if (!severity) out.push({ kind: "saturation", status: "clear" });
    else {
      const threshold = severity === "critical" ? thresholds.saturationAct : severity === "warning" ? thresholds.saturationWatch : thresholds.saturationAct;
      out.push({
        kind: "saturation",
        status: "trip",
        severity,
        summary:
          severity === "info"
            ? `Output saturation ${pct(sat.share24h)} and rising ${pct(sat.slopePerDay ?? 0)} a day: reaches the act limit ${pct(thresholds.saturationAct)} by ${sat.projectedActAt!.toISOString().slice(0, 10)}.`
            : `Output at a limit ${pct(sat.share24h)} of the last 24 h (${severity === "critical" ? "act" : "watch"} limit ${pct(threshold)}).`,
        evidence: { metric: "saturation.share24h", value: sat.share24h, threshold, unit: "share", ...dayWindow, figures: satFigures },
      });
    }
  }

  // Windup: share of the last 24 h with the integrator held.
  const w = figures.windup;
  if (w.share24h === null) out.push({ kind: "windup", status: "unknown" });
  else {
    const severity: FindingSeverity | null = w.share24h >= thresholds.clampAct ? "critical" : w.share24h >= thresholds.clampWatch ? "warning" : null;
    if (!severity) out.push({ kind: "windup", status: "clear" });
    else {
      const threshold = severity === "critical" ? thresholds.clampAct : thresholds.clampWatch;
      out.push({
        kind: "windup",
        status: "trip",
        severity,
        summary: `Integrator held at a limit ${pct(w.share24h)} of the last 24 h${w.pinnedShare24h ? `, pinned with the output saturated ${pct(w.pinnedShare24h)}` : ""}.`,
        evidence: { metric: "windup.share24h", value: w.share24h, threshold, unit: "share", ...dayWindow, figures: { share24h: w.share24h, pinnedShare24h: w.pinnedShare24h } },
      });
    }
  }

  // Oscillation: Hägglund's rule as a rate; twice the limit is the act level (score table).
  const o = figures.oscillation;
  if (o.detectionsPerHour === null || !(o.limitPerHour > 0)) out.push({ kind: "oscillation", status: "unknown" });
  else {
    const severity: FindingSeverity | null = o.detectionsPerHour > 2 * o.limitPerHour ? "critical" : o.detectionsPerHour > o.limitPerHour ? "warning" : null;
    if (!severity) out.push({ kind: "oscillation", status: "clear" });
    else {
      const tsupS = 36_000 / o.limitPerHour;
      const threshold = severity === "critical" ? 2 * o.limitPerHour : o.limitPerHour;
      out.push({
        kind: "oscillation",
        status: "trip",
        severity,
        summary: `${o.detectionsPerHour.toFixed(1)} load disturbances per hour, over the limit of ${o.limitPerHour.toFixed(1)} (more than 10 within 50·Tu).`,
        evidence: {
          metric: "oscillation.detectionsPerHour",
          value: o.detectionsPerHour,
          threshold,
          unit: "per hour",
          windowStart: lastDigestEnd ? new Date(lastDigestEnd.getTime() - tsupS * 1000).toISOString() : null,
          windowEnd: iso(lastDigestEnd),
          figures: { detectionsPerHour: o.detectionsPerHour, limitPerHour: o.limitPerHour, supervisionSeconds: tsupS },
        },
      });
    }
  }

  // Drift: CUSUM over h; twice h is the act level; a fall in IAE is info.
  out.push(judgeDrift(figures.drift, input.driftFirstSignalAt, lastDigestEnd));
  return out;
}

function judgeDrift(d: Pick<DriftFigures, "state" | "baselineMean" | "baselineStd" | "cusumHigh" | "cusumLow" | "limit" | "sinceGainVersion">, firstSignalAt: Date | null, lastDigestEnd: Date | null): FindingJudgement {
  if (d.state === "learning") return { kind: "drift", status: "unknown" };
  if (d.state !== "drifting") return { kind: "drift", status: "clear" };
  const worse = d.cusumHigh > d.limit;
  const value = worse ? d.cusumHigh : d.cusumLow;
  const severity: FindingSeverity = !worse ? "info" : value > 2 * d.limit ? "critical" : "warning";
  return {
    kind: "drift",
    status: "trip",
    severity,
    summary: worse
      ? `Control error (IAE per second) has drifted up from its baseline after gain version ${d.sinceGainVersion ?? "?"} (CUSUM ${value.toFixed(1)} over ${d.limit}).`
      : `Control error has fallen below its baseline after gain version ${d.sinceGainVersion ?? "?"}; the baseline no longer describes the loop.`,
    evidence: {
      metric: worse ? "drift.cusumHigh" : "drift.cusumLow",
      value,
      threshold: d.limit,
      unit: "baseline std",
      windowStart: firstSignalAt ? firstSignalAt.toISOString() : null,
      windowEnd: lastDigestEnd ? lastDigestEnd.toISOString() : null,
      figures: { baselineMean: d.baselineMean, baselineStd: d.baselineStd, cusumHigh: d.cusumHigh, cusumLow: d.cusumLow, sinceGainVersion: d.sinceGainVersion },
    },
  };
}

function formatSpan(seconds: number): string {
  if (seconds < 120) return `${Math.round(seconds)} s`;
  if (seconds < 7200) return `${Math.round(seconds / 60)} min`;
  if (seconds < 172_800) return `${Math.round(seconds / 3600)} h`;
  return `${Math.round(seconds / 86_400)} days`;
}

export const SEVERITY_RANK: Record<FindingSeverity, number> = { info: 0, warning: 1, critical: 2 };
