// How much work one compute request may ask for: about a second of one core on the server,
// and memory in proportion. Requests past it are refused with 400 `too_large` before
// anything runs (the stability check and the least-squares fit bound their own work inside
// the control engine: see MAX_SWEEP_POINTS and MAX_FIT_SAMPLES there).
import { ControlInputError } from "~/lib/control";
import type { PlantInput, SimulateRequest } from "./schemas";

/**
 * Work units per request. A simulated sample of an order-n plant costs about n² + 2n + 10
 * units (the state update is n², the controller and bookkeeping the rest); 200 000 samples
 * of an order-20 plant (9·10⁷ units) took 0.9 s on the development machine, and writing the
 * four series as JSON adds to that, so 6·10⁷ keeps a request near half a second.
 */
export const MAX_WORK_UNITS = 60_000_000;

export function plantOrder(plant: PlantInput): number {
  if (plant.type === "sopdt") return 2;
  if (plant.type === "tf") {
    const first = plant.denominator.findIndex((c) => c !== 0);
    return Math.max(0, plant.denominator.length - 1 - first);
  }
  return 1;
}

export function simulationWork(request: Pick<SimulateRequest, "plant" | "samplePeriod" | "duration">): number {
  const samples = Math.floor(request.duration / request.samplePeriod + 1e-9) + 1;
  const n = plantOrder(request.plant);
  return samples * (n * n + 2 * n + 10);
}

export function requireSimulationWithinLimit(request: Pick<SimulateRequest, "plant" | "samplePeriod" | "duration">): void {
  const work = simulationWork(request);
  if (work > MAX_WORK_UNITS) {
    throw new ControlInputError(
      "duration",
      `would take about ${(work / MAX_WORK_UNITS).toFixed(1)} s of computing for a plant of order ${plantOrder(request.plant)}; shorten the run or lengthen the sample period`,
      "too_large",
    );
  }
}
