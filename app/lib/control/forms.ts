/**
 * PID parameter forms and exact conversions between them.
 *
 * - standard (ISA): Kc(1 + 1/(Ti s) + Td s)
 * - parallel:       kp + ki/s + kd s           kp = Kc, ki = Kc/Ti, kd = Kc·Td
 * - series:         Kc(1 + 1/(τI s))(1 + τD s) → standard Kc(1 + τD/τI), Ti = τI + τD,
 *                   Td = τI·τD/(τI + τD)
 *
 * `ti: null` means no integral action in both the standard and the series form. Gains are
 * per second (ki in 1/s, kd in s).
 *
 * Sign convention, the same in every form: a reverse-acting controller (for a plant with a
 * negative gain) has all its actions negative. In standard and series form that is a
 * negative Kc with positive times; in parallel form the non-zero gains of kp, ki and kd
 * share one sign (checkGainSigns).
 */
import { ControlInputError, requireFinite, requireNonNegative, requirePositive } from "./errors";

export interface ParallelGains {
  kp: number;
  ki: number;
  kd: number;
}

export interface StandardGains {
  kc: number;
  /** Integral time in seconds; null = no integral action. */
  ti: number | null;
  /** Derivative time in seconds (0 = no derivative action). */
  td: number;
}

/** Same fields as the standard form, but meaning τI and τD of the series (interacting) form. */
export type SeriesGains = StandardGains;

export type PidGains =
  | ({ form: "parallel" } & ParallelGains)
  | ({ form: "standard" } & StandardGains)
  | ({ form: "series" } & SeriesGains);

function checkStandard(gains: StandardGains, prefix: string): void {
  requireFinite(`${prefix}.kc`, gains.kc);
  if (gains.ti !== null) requirePositive(`${prefix}.ti`, gains.ti);
  requireNonNegative(`${prefix}.td`, gains.td);
}

/**
 * The sign convention for parallel gains: the non-zero ones share one sign. Returns the
 * offending field and why, or null when the gains follow it.
 */
export function checkGainSigns(gains: ParallelGains): { field: "ki" | "kd"; message: string } | null {
  const sign = Math.sign(gains.kp) || Math.sign(gains.ki) || Math.sign(gains.kd);
  for (const field of ["ki", "kd"] as const) {
    if (gains[field] !== 0 && Math.sign(gains[field]) !== sign) {
      return { field, message: `must have the same sign as ${field === "kd" && gains.kp === 0 ? "ki" : "kp"} (a reverse-acting controller has all gains negative)` };
    }
  }
  return null;
}

export function standardToParallel(gains: StandardGains): ParallelGains {
  checkStandard(gains, "gains");
  return {
    kp: gains.kc,
    ki: gains.ti === null ? 0 : gains.kc / gains.ti,
    kd: gains.kc * gains.td,
  };
}

/**
 * Parallel → standard. Needs kp ≠ 0 (Ti and Td are times relative to the proportional
 * gain); pure I or pure D controllers have no standard form.
 */
export function parallelToStandard(gains: ParallelGains): StandardGains {
  requireFinite("gains.kp", gains.kp);
  requireFinite("gains.ki", gains.ki);
  requireFinite("gains.kd", gains.kd);
  if (gains.kp === 0) {
    throw new ControlInputError("gains.kp", "must be non-zero to express the controller in standard form");
  }
  if (gains.ki !== 0 && Math.sign(gains.ki) !== Math.sign(gains.kp)) {
    throw new ControlInputError("gains.ki", "must have the same sign as kp (Ti would be negative)");
  }
  if (gains.kd !== 0 && Math.sign(gains.kd) !== Math.sign(gains.kp)) {
    throw new ControlInputError("gains.kd", "must have the same sign as kp (Td would be negative)");
  }
  return {
    kc: gains.kp,
    ti: gains.ki === 0 ? null : gains.kp / gains.ki,
    td: gains.kd / gains.kp,
  };
}

export function seriesToStandard(gains: SeriesGains): StandardGains {
  checkStandard(gains, "gains");
  // Without integral action the series form is Kc(1 + τD s): already standard.
  if (gains.ti === null) return { kc: gains.kc, ti: null, td: gains.td };
  const tauI = gains.ti;
  const tauD = gains.td;
  return {
    kc: gains.kc * (1 + tauD / tauI),
    ti: tauI + tauD,
    td: (tauI * tauD) / (tauI + tauD),
  };
}

/**
 * Standard → series, or null when no real factorisation exists (Ti < 4Td). The larger root
 * is taken as τI so that Td → 0 gives back τI = Ti.
 */
export function standardToSeries(gains: StandardGains): SeriesGains | null {
  checkStandard(gains, "gains");
  if (gains.ti === null || gains.td === 0) return { kc: gains.kc, ti: gains.ti, td: gains.td };
  const ti = gains.ti;
  const discriminant = 1 - (4 * gains.td) / ti;
  // A tiny negative value is rounding at the double root Ti = 4Td.
  if (discriminant < -1e-12) return null;
  const root = Math.sqrt(Math.max(0, discriminant));
  const tauI = (ti / 2) * (1 + root);
  // τD from the product (Ti·Td/τI) avoids cancellation when Td ≪ Ti.
  const tauD = (ti * gains.td) / tauI;
  return { kc: (gains.kc * tauI) / ti, ti: tauI, td: tauD };
}

export function toParallelGains(gains: PidGains): ParallelGains {
  switch (gains.form) {
    case "parallel": {
      requireFinite("gains.kp", gains.kp);
      requireFinite("gains.ki", gains.ki);
      requireFinite("gains.kd", gains.kd);
      const wrong = checkGainSigns(gains);
      if (wrong) throw new ControlInputError(`gains.${wrong.field}`, wrong.message);
      return { kp: gains.kp, ki: gains.ki, kd: gains.kd };
    }
    case "standard":
      return standardToParallel(gains);
    case "series":
      return standardToParallel(seriesToStandard(gains));
    default:
      throw new ControlInputError("gains.form", "must be parallel, standard or series");
  }
}

export function toStandardGains(gains: PidGains): StandardGains {
  switch (gains.form) {
    case "parallel":
      return parallelToStandard(gains);
    case "standard":
      checkStandard(gains, "gains");
      return { kc: gains.kc, ti: gains.ti, td: gains.td };
    case "series":
      return seriesToStandard(gains);
    default:
      throw new ControlInputError("gains.form", "must be parallel, standard or series");
  }
}

/** All three forms at once; `series` is absent when it does not exist. */
export interface GainForms {
  standard: StandardGains;
  parallel: ParallelGains;
  series?: SeriesGains;
}

export function describeGainForms(standard: StandardGains): GainForms {
  const series = standardToSeries(standard);
  const forms: GainForms = { standard: { ...standard }, parallel: standardToParallel(standard) };
  if (series) forms.series = series;
  return forms;
}
