// Step and load responses of a gain set on its template's reference model, for comparing
// versions. Linear responses around the operating point: the plant starts at rest, the
// controller's output is not limited (deviations from an unknown operating point cannot be
// checked against absolute output limits). Pure; runs in the browser and on the server.
import { simulateClosedLoop, type AntiWindupMode, type PlantModel } from "~/lib/control";
import type { GainSetAntiWindup } from "./types";

export type ResponseGainSet = {
  gains: { kp: number; ki: number; kd: number };
  filterN: number | null;
  setpointWeight: number;
  antiWindup: GainSetAntiWindup;
  trackingTime: number | null;
  samplePeriod: number;
};

export type GainSetResponse = { t: number[]; y: number[]; u: number[]; iae: number; overshootPercent: number | null; settlingTime: number | null; peakDeviation: number };

/** Most samples a comparison run takes (the run is shortened, never the sample period). */
export const MAX_RESPONSE_SAMPLES = 20_000;

/** A duration that shows the loop settle: several of the plant's time constants and its dead time. */
export function responseDuration(plant: PlantModel, samplePeriod: number): number {
  const slow = plant.type === "fopdt" ? plant.timeConstant : plant.type === "sopdt" ? plant.timeConstant + plant.timeConstant2 : plant.type === "ipdt" ? 4 * plant.deadTime : 10;
  // Long enough for a loop with sensible margins to settle after a step or a load.
  const wanted = 2.5 * slow + 12 * (plant.deadTime ?? 0) + 20 * samplePeriod;
  return Math.min(wanted, samplePeriod * MAX_RESPONSE_SAMPLES);
}

const mode = (m: GainSetAntiWindup): AntiWindupMode => (m === "back_calculation" ? "back-calculation" : "clamp");

function run(set: ResponseGainSet, plant: PlantModel, duration: number, kind: "setpoint" | "load", size: number): GainSetResponse | null {
  try {
    const result = simulateClosedLoop({
      plant,
      samplePeriod: set.samplePeriod,
      duration,
      controller: {
        gains: { form: "parallel", ...set.gains },
        setpointWeight: set.setpointWeight,
        derivativeFilter: set.gains.kd === 0 ? "none" : { n: set.filterN ?? 10 },
        antiWindup: mode(set.antiWindup),
        ...(set.trackingTime !== null ? { trackingTime: set.trackingTime } : {}),
      },
      setpoint: kind === "setpoint" ? [{ time: 0, value: size }] : [{ time: 0, value: 0 }],
      loadDisturbance: kind === "load" ? [{ time: 0, value: size }] : [],
    });
    const peak = result.y.reduce((m, v) => (Math.abs(v) > Math.abs(m) ? v : m), 0);
    return {
      t: result.t,
      y: result.y,
      u: result.u,
      iae: result.metrics.iae,
      overshootPercent: kind === "setpoint" ? result.metrics.overshootPercent : null,
      settlingTime: kind === "setpoint" ? result.metrics.settlingTime : null,
      peakDeviation: peak,
    };
  } catch {
    return null;
  }
}

/**
 * A set-point step of `setpointStep` (process units) and a load step of `loadStep` (output
 * units, at the plant input) on the reference plant; null where the run cannot be made.
 */
export function simulateGainSetResponses(set: ResponseGainSet, plant: PlantModel, { setpointStep = 1, loadStep = 1, duration = responseDuration(plant, set.samplePeriod) } = {}) {
  return { duration, setpointStep, loadStep, setpoint: run(set, plant, duration, "setpoint", setpointStep), load: run(set, plant, duration, "load", loadStep) };
}
