// Gains as typed in the editor (strings), read into PidGains with a message per field.
import type { PidGains } from "~/lib/control";
import { checkGainSigns, type ParallelGains, type StandardGains } from "~/lib/control";
import { parseNumber, toInputValue } from "./format";
import type { GainForm } from "./proposal-table";

export type GainDraft = { form: GainForm; a: string; b: string; c: string };
export type GainErrors = Partial<Record<"a" | "b" | "c", string>>;

export function gainDraftFrom(form: GainForm, gains: { standard: StandardGains; parallel: ParallelGains }): GainDraft {
  if (form === "standard") {
    return { form, a: toInputValue(gains.standard.kc), b: gains.standard.ti === null ? "" : toInputValue(gains.standard.ti), c: toInputValue(gains.standard.td) };
  }
  return { form, a: toInputValue(gains.parallel.kp), b: toInputValue(gains.parallel.ki), c: toInputValue(gains.parallel.kd) };
}

export function readGainDraft(draft: GainDraft): { ok: true; gains: PidGains } | { ok: false; errors: GainErrors } {
  const errors: GainErrors = {};
  const a = parseNumber(draft.a);
  if (a === null) errors.a = "Enter a number.";
  const b = draft.b.trim() === "" ? null : parseNumber(draft.b);
  const c = draft.c.trim() === "" ? 0 : parseNumber(draft.c);
  if (draft.form === "standard") {
    if (draft.b.trim() !== "" && (b === null || !(b > 0))) errors.b = "Enter a time above 0 s, or leave empty for no integral action.";
    if (c === null || c < 0) errors.c = "Enter 0 s or more.";
    if (Object.keys(errors).length) return { ok: false, errors };
    return { ok: true, gains: { form: "standard", kc: a!, ti: b, td: c! } };
  }
  if (draft.b.trim() !== "" && b === null) errors.b = "Enter a number.";
  if (c === null) errors.c = "Enter a number.";
  if (a === 0 && ((b ?? 0) !== 0 || c !== 0)) errors.a = "Needs a proportional gain other than 0.";
  if (Object.keys(errors).length) return { ok: false, errors };
  // Reverse acting: all three negative, as a negative Kc is in standard form.
  const wrong = checkGainSigns({ kp: a!, ki: b ?? 0, kd: c! });
  if (wrong) return { ok: false, errors: { [wrong.field === "ki" ? "b" : "c"]: "Give it the sign of kp (all negative for a reverse-acting loop)." } };
  return { ok: true, gains: { form: "parallel", kp: a!, ki: b ?? 0, kd: c! } };
}
