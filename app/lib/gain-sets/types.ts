// Shapes shared by the gain-set schema, the proposal checks and the pages (browser-safe).

export const GAIN_SET_STATES = ["draft", "proposed", "approved", "released", "retired", "rejected"] as const;
export type GainSetState = (typeof GAIN_SET_STATES)[number];

export const GAIN_SET_FORMS = ["parallel", "standard"] as const;
export type GainSetForm = (typeof GAIN_SET_FORMS)[number];

/** Anti-windup as stored and sent to devices (the control library spells it `back-calculation`). */
export const ANTI_WINDUP_MODES = ["clamp", "back_calculation"] as const;
export type GainSetAntiWindup = (typeof ANTI_WINDUP_MODES)[number];

/** Gains exactly as the engineer entered them: parallel (kp, ki /s, kd s) or standard (Kc, Ti s, Td s). */
export type EnteredGains = { form: "parallel"; kp: number; ki: number; kd: number } | { form: "standard"; kc: number; ti: number | null; td: number };

/** Margins of the loop on the template's reference model (null where there is no crossover). */
export type GainSetMargins = {
  stable: boolean;
  gainMargin: number | null;
  phaseMargin: number | null;
  delayMargin: number | null;
  peakSensitivity: number | null;
};

export const GAIN_SET_CHECK_NAMES = ["finite", "envelope", "integrator_limits", "closed_loop"] as const;
export type GainSetCheckName = (typeof GAIN_SET_CHECK_NAMES)[number];

/** One check run on proposal. */
export type GainSetCheck = {
  name: GainSetCheckName;
  passed: boolean;
  /** What was found, in words, e.g. "phase margin 24.1° is below the template's 30°". */
  message: string;
  /** Which fields failed (kp, integratorMin, …), for forms. */
  fields?: string[];
};

/** The result stored with a gain set when it is proposed. */
export type GainSetChecks = {
  passed: boolean;
  checkedAt: string;
  checks: GainSetCheck[];
  margins: GainSetMargins | null;
  /** Set when an admin proposed it although a check failed. */
  overridden?: { by: string; reason: string } | null;
};
