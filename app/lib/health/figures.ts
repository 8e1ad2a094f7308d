/**
 * A loop's health figures in the shape of issue 12's `GET …/loops/:id/health` (saturation,
 * windup, oscillation, drift), from its digests, its template's settings and `now`. Pure: the
 * digests are put in window order first, so the same digests in any arrival order (a backfill,
 * a live stream, a retried batch) give the same figures.
 */
import type { HealthThresholdSettings } from "./assess";
import { assessDrift, DEFAULT_DRIFT_SETTINGS, type DriftFigures } from "./drift";
import { assessOscillation, type OscillationFigures } from "./oscillation";
import { assessSaturation, type SaturationFigures } from "./saturation";
import { inWindowOrder, type HealthDigest } from "./series";
import { assessWindup, type WindupFigures } from "./windup";

/** The template settings the figures use; drift's are optional with DEFAULT_DRIFT_SETTINGS (N 24, k 0.5, h 5). */
export type LoopHealthFigureSettings = Pick<HealthThresholdSettings, "saturationAct" | "oscillationPerHour"> & {
  driftBaselineWindows?: number;
  driftK?: number;
  driftH?: number;
};

export type LoopHealthFigures = {
  saturation: SaturationFigures;
  windup: Pick<WindupFigures, "share24h" | "pinnedShare24h">;
  oscillation: Pick<OscillationFigures, "detectionsPerHour" | "limitPerHour">;
  drift: Pick<DriftFigures, "state" | "baselineMean" | "baselineStd" | "cusumHigh" | "cusumLow" | "limit" | "sinceGainVersion">;
};

export function loopHealthFigures(digests: readonly HealthDigest[], settings: LoopHealthFigureSettings, now: Date): LoopHealthFigures {
  const ordered = inWindowOrder(digests);
  const windup = assessWindup(ordered, now);
  const oscillation = assessOscillation(ordered, settings.oscillationPerHour, now);
  const drift = assessDrift(ordered, now, {
    baselineWindows: settings.driftBaselineWindows ?? DEFAULT_DRIFT_SETTINGS.baselineWindows,
    k: settings.driftK ?? DEFAULT_DRIFT_SETTINGS.k,
    h: settings.driftH ?? DEFAULT_DRIFT_SETTINGS.h,
  });
  return {
    saturation: assessSaturation(ordered, settings.saturationAct, now),
    windup: { share24h: windup.share24h, pinnedShare24h: windup.pinnedShare24h },
    oscillation: { detectionsPerHour: oscillation.detectionsPerHour, limitPerHour: oscillation.limitPerHour },
    drift: {
      state: drift.state,
      baselineMean: drift.baselineMean,
      baselineStd: drift.baselineStd,
      cusumHigh: drift.cusumHigh,
      cusumLow: drift.cusumLow,
      limit: drift.limit,
      sinceGainVersion: drift.sinceGainVersion,
    },
  };
}
