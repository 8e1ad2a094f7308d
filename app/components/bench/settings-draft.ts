// The loop settings as typed (strings), and their reading into BenchSettings with a message
// per field, so a half-typed number never reaches the computation.
import type { BenchSettings } from "~/lib/compute/bench";
import type { AntiWindupMode, ControllerType } from "~/lib/control";
import { parseNumber, toInputValue } from "./format";

export type SettingsDraft = {
  kinds: Record<ControllerType, boolean>;
  simcTimeConstant: string;
  imcLambda: string;
  samplePeriod: string;
  outputMin: string;
  outputMax: string;
  antiWindup: AntiWindupMode;
  filterN: string;
  setpointChange: string;
  loadStep: string;
};

export type SettingsErrors = Partial<Record<keyof SettingsDraft, string>>;

export function draftFromSettings(settings: BenchSettings): SettingsDraft {
  return {
    kinds: { P: settings.controllerKinds.includes("P"), PI: settings.controllerKinds.includes("PI"), PID: settings.controllerKinds.includes("PID") },
    simcTimeConstant: toInputValue(settings.simcTimeConstant),
    imcLambda: toInputValue(settings.imcLambda),
    samplePeriod: toInputValue(settings.samplePeriod),
    outputMin: toInputValue(settings.outputLimits?.min),
    outputMax: toInputValue(settings.outputLimits?.max),
    antiWindup: settings.antiWindup,
    filterN: toInputValue(settings.filterN),
    setpointChange: toInputValue(settings.setpointChange),
    loadStep: toInputValue(settings.loadStep),
  };
}

export function readSettingsDraft(
  draft: SettingsDraft,
  operatingPoint: BenchSettings["operatingPoint"],
): { ok: true; settings: BenchSettings } | { ok: false; errors: SettingsErrors } {
  const errors: SettingsErrors = {};
  const optionalPositive = (key: "simcTimeConstant" | "imcLambda"): number | undefined => {
    if (draft[key].trim() === "") return undefined;
    const v = parseNumber(draft[key]);
    if (v === null || !(v > 0)) errors[key] = "Enter a time above 0 s, or leave empty for the rule's default.";
    return v ?? undefined;
  };
  const required = (key: "samplePeriod" | "filterN" | "setpointChange" | "loadStep", check: (v: number) => string | null): number => {
    const v = parseNumber(draft[key]);
    if (v === null) {
      errors[key] = "Enter a number.";
      return Number.NaN;
    }
    const problem = check(v);
    if (problem) errors[key] = problem;
    return v;
  };
  const controllerKinds = (Object.keys(draft.kinds) as ControllerType[]).filter((k) => draft.kinds[k]);
  if (controllerKinds.length === 0) errors.kinds = "Pick at least one controller kind.";
  const simcTimeConstant = optionalPositive("simcTimeConstant");
  const imcLambda = optionalPositive("imcLambda");
  const samplePeriod = required("samplePeriod", (v) => (v > 0 ? null : "Enter a period above 0 s."));
  const filterN = required("filterN", (v) => (v > 0 && v <= 1000 ? null : "Enter N between 0 and 1000."));
  const setpointChange = required("setpointChange", (v) => (v !== 0 ? null : "Enter a change other than 0."));
  const loadStep = required("loadStep", () => null);
  let outputLimits: BenchSettings["outputLimits"] = null;
  const min = parseNumber(draft.outputMin);
  const max = parseNumber(draft.outputMax);
  const minEmpty = draft.outputMin.trim() === "";
  const maxEmpty = draft.outputMax.trim() === "";
  if (!minEmpty && min === null) errors.outputMin = "Enter a number, or leave both limits empty.";
  if (!maxEmpty && max === null) errors.outputMax = "Enter a number, or leave both limits empty.";
  if (minEmpty !== maxEmpty) errors[minEmpty ? "outputMin" : "outputMax"] = "Give both limits, or neither.";
  if (min !== null && max !== null) {
    if (!(min < max)) errors.outputMax = "Must be above the lower limit.";
    else if (operatingPoint.output < min || operatingPoint.output > max) {
      errors.outputMin = `The limits must contain the starting output, ${toInputValue(operatingPoint.output)}.`;
    } else outputLimits = { min, max };
  }
  if (Object.keys(errors).length) return { ok: false, errors };
  return {
    ok: true,
    settings: {
      controllerKinds,
      simcTimeConstant,
      imcLambda,
      samplePeriod,
      outputLimits,
      antiWindup: draft.antiWindup,
      filterN,
      setpointChange,
      loadStep,
      operatingPoint,
    },
  };
}
