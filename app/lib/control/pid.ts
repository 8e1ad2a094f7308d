/**
 * Discrete PID controller for simulation and for device firmware to mirror.
 *
 * Update order, once per sample (the one order used everywhere in the engine):
 *   1. P = kp·(b·r − y)
 *   2. D = ad·D − bd·(y − y_prev)        derivative on measurement, backward difference,
 *      ad = Tf/(Tf + h), bd = kd/(Tf + h) first-order filter Tf (= Td/N); Tf = 0 gives the
 *                                         unfiltered difference kd·(y − y_prev)/h
 *   3. v = P + I + D,  u = sat(v)
 *   4. integrator, after the output has been computed (forward Euler):
 *        none              I += ki·h·e
 *        clamp             I += ki·h·e unless v is past a limit and ki·e pushes further
 *        back-calculation  I += ki·h·e + (h/Tt)·(u − v)
 *      then, unless anti-windup is "none", the integrator state is held inside the limits
 *      derived from the output range (see deriveIntegratorLimits).
 * with e = r − y (unweighted: the integral must drive y to r whatever b is).
 * In standard form ad = Td/(Td + N·h) and bd = Kc·N·ad, which is the same thing.
 */
import { ControlInputError, requireFinite, requireNonNegative, requirePositive } from "./errors";
import { toParallelGains, type ParallelGains, type PidGains } from "./forms";

export type AntiWindupMode = "none" | "clamp" | "back-calculation";

/** `{ n }`: Tf = Td/N; `{ timeConstant }`: Tf directly (s); `"none"`: plain difference. */
export type DerivativeFilter = { n: number } | { timeConstant: number } | "none";

/**
 * Where the integral gain sits relative to the integrator state: "before" stores
 * Σ ki·h·e (state in output units), "after" stores Σ h·e and multiplies by ki on output.
 */
export type IntegralPlacement = "before" | "after";

export interface OutputLimits {
  min: number;
  max: number;
}

export interface PidControllerConfig {
  gains: PidGains;
  /** Sample period h in seconds. */
  samplePeriod: number;
  /** Set-point weight b on the proportional term; default 1. */
  setpointWeight?: number;
  /** Default `{ n: 10 }`. */
  derivativeFilter?: DerivativeFilter;
  /** Default unlimited. */
  outputLimits?: OutputLimits;
  /** Default "clamp". */
  antiWindup?: AntiWindupMode;
  /** Back-calculation tracking time Tt (s); default √(Ti·Td) for PID, Ti for PI. */
  trackingTime?: number;
  /** Default "before". */
  integralPlacement?: IntegralPlacement;
  /** Integral contribution to the output at start (output units), for a bumpless start. */
  initialIntegral?: number;
}

/** Stateful stepper. `step` allocates nothing; read the flags after each call. */
export interface PidStepper {
  /** One sample: set point r and measurement y in, controller output u out. */
  step(r: number, y: number): number;
  reset(initialIntegral?: number): void;
  /** Output of the last step (after limits). */
  readonly u: number;
  /** Unlimited output v of the last step. */
  readonly unlimitedOutput: number;
  readonly saturatedHigh: boolean;
  readonly saturatedLow: boolean;
  /** True when the integrator did not move freely this step (clamped or at its limit). */
  readonly integratorHeld: boolean;
  /** Integral contribution to the output (output units). */
  readonly integral: number;
  /** The stored integrator state in the configured placement. */
  readonly integratorState: number;
  readonly gains: Readonly<ParallelGains>;
}

/**
 * Integrator-state bounds from the output range (a rule of practice): with the gain after
 * the state, the state is bounded by outMin/ki … outMax/ki; with the gain before, by the
 * output limits themselves. A negative ki swaps the bounds; ki = 0 leaves them open.
 */
export function deriveIntegratorLimits(
  outputLimits: OutputLimits,
  ki: number,
  placement: IntegralPlacement,
): OutputLimits {
  checkLimits(outputLimits, "outputLimits");
  requireFinite("ki", ki);
  if (placement === "before") return { min: outputLimits.min, max: outputLimits.max };
  if (ki === 0) return { min: -Infinity, max: Infinity };
  const a = outputLimits.min / ki;
  const b = outputLimits.max / ki;
  // + 0 turns −0 (0 / −ki) into 0.
  return { min: Math.min(a, b) + 0, max: Math.max(a, b) + 0 };
}

function checkLimits(limits: OutputLimits, field: string): void {
  if (Number.isNaN(limits.min) || Number.isNaN(limits.max)) {
    throw new ControlInputError(field, "limits must be numbers");
  }
  if (!(limits.min < limits.max)) throw new ControlInputError(`${field}.max`, "must be greater than min");
}

/** Filter time constant Tf implied by the configuration (0 = unfiltered). */
export function resolveDerivativeFilterTime(gains: ParallelGains, filter: DerivativeFilter | undefined): number {
  const f = filter ?? { n: 10 };
  if (f === "none") return 0;
  if ("timeConstant" in f) return requireNonNegative("derivativeFilter.timeConstant", f.timeConstant);
  requirePositive("derivativeFilter.n", f.n);
  if (gains.kd === 0) return 0;
  if (gains.kp === 0) {
    throw new ControlInputError("derivativeFilter", "give a filter time constant when kp is zero (Td = kd/kp is undefined)");
  }
  return gains.kd / gains.kp / f.n;
}

/** Tt default: √(Ti·Td) = √(kd/ki) with derivative action, Ti = kp/ki without. */
export function resolveTrackingTime(gains: ParallelGains, trackingTime: number | undefined): number {
  if (trackingTime !== undefined) return requirePositive("trackingTime", trackingTime);
  if (gains.ki === 0) return Infinity;
  if (gains.kd !== 0 && Math.sign(gains.kd) === Math.sign(gains.ki)) return Math.sqrt(gains.kd / gains.ki);
  if (gains.kp !== 0 && Math.sign(gains.kp) === Math.sign(gains.ki)) return gains.kp / gains.ki;
  throw new ControlInputError("trackingTime", "is required when Ti is undefined (kp is zero)");
}

// Coefficients and state live in Float64Arrays rather than object fields so the hot loop
// reads and writes raw doubles, and step() is kept small and branch-light so the JIT inlines
// it into the caller's loop (a call that is not inlined boxes its double arguments).
// Slots are literal numbers: a named module constant costs a context load per access.
//   k: 0 kp, 1 ki, 2 ki·h, 3 b, 4 ad, 5 bd, 6 uMin, 7 uMax, 8 h/Tt (0 unless back-calculation),
//      9 integral min, 10 integral max, 11 clamping on (1) / off (0)
//   s: 0 integral I, 1 derivative D, 2 previous y, 3 u, 4 v

/**
 * The controller's coefficients in the slot layout above, validated. Shared by the stepper
 * and the fused closed-loop kernel (./loop-kernel.ts) so both compute the same numbers.
 */
export function resolvePidCoefficients(config: PidControllerConfig): { gains: ParallelGains; k: Float64Array; after: boolean } {
  const h = requirePositive("samplePeriod", config.samplePeriod);
  const gains = toParallelGains(config.gains);
  const k = new Float64Array(12);
  k[0] = gains.kp;
  k[1] = gains.ki;
  k[2] = gains.ki * h;
  k[3] = requireFinite("setpointWeight", config.setpointWeight ?? 1);
  const tf = resolveDerivativeFilterTime(gains, config.derivativeFilter);
  k[4] = tf / (tf + h);
  k[5] = gains.kd / (tf + h);
  const limits = config.outputLimits ?? { min: -Infinity, max: Infinity };
  checkLimits(limits, "outputLimits");
  k[6] = limits.min;
  k[7] = limits.max;
  const mode = config.antiWindup ?? "clamp";
  if (mode !== "none" && mode !== "clamp" && mode !== "back-calculation") {
    throw new ControlInputError("antiWindup", "must be none, clamp or back-calculation");
  }
  k[11] = mode === "clamp" ? 1 : 0;
  k[8] = mode === "back-calculation" && gains.ki !== 0 ? h / resolveTrackingTime(gains, config.trackingTime) : 0;
  const placement = config.integralPlacement ?? "before";
  if (placement !== "before" && placement !== "after") {
    throw new ControlInputError("integralPlacement", "must be before or after");
  }
  // The state is kept as the integral contribution I (gain before). With the gain after,
  // the firmware's state is I/ki and its bounds outMin/ki … outMax/ki, i.e. the same I
  // bounds: identical arithmetic up to rounding, reported through integratorState.
  if (mode === "none") {
    k[9] = -Infinity;
    k[10] = Infinity;
  } else {
    const bounds = deriveIntegratorLimits(limits, gains.ki, "before");
    k[9] = bounds.min;
    k[10] = bounds.max;
  }
  return { gains, k, after: placement === "after" && gains.ki !== 0 };
}

class PidController implements PidStepper {
  readonly gains: Readonly<ParallelGains>;
  saturatedHigh = false;
  saturatedLow = false;
  integratorHeld = false;

  private readonly k = new Float64Array(12);
  private readonly s = new Float64Array(5);
  private readonly after: boolean;
  private first = true;

  constructor(config: PidControllerConfig) {
    const resolved = resolvePidCoefficients(config);
    this.gains = Object.freeze(resolved.gains);
    this.k.set(resolved.k);
    this.after = resolved.after;
    this.reset(config.initialIntegral ?? 0);
  }

  get u(): number {
    return this.s[3];
  }

  get unlimitedOutput(): number {
    return this.s[4];
  }

  get integral(): number {
    return this.s[0];
  }

  get integratorState(): number {
    return this.after ? this.s[0] / this.k[1] : this.s[0];
  }

  reset(initialIntegral = 0): void {
    requireFinite("initialIntegral", initialIntegral);
    this.s.fill(0);
    this.s[0] = initialIntegral;
    this.first = true;
    this.saturatedHigh = false;
    this.saturatedLow = false;
    this.integratorHeld = false;
  }

  step(r: number, y: number): number {
    const k = this.k;
    const s = this.s;
    if (this.first) {
      // No derivative kick on the first sample: there is no previous measurement.
      s[2] = y;
      this.first = false;
    }
    const d = k[4] * s[1] - k[5] * (y - s[2]);
    const v = k[0] * (k[3] * r - y) + s[0] + d;
    const uMax = k[7];
    const uMin = k[6];
    const high = v > uMax;
    const low = v < uMin;
    const u = high ? uMax : low ? uMin : v;
    const e = r - y;
    const push = k[1] * e;
    // Clamping: freeze when past a limit and the error pushes further.
    let held = k[11] === 1 && ((high && push > 0) || (low && push < 0));
    // Back-calculation term is zero in the other modes (k[8] = 0).
    let integral = s[0] + (held ? 0 : k[2] * e) + k[8] * (u - v);
    if (integral > k[10]) {
      integral = k[10];
      held = true;
    } else if (integral < k[9]) {
      integral = k[9];
      held = true;
    }
    s[0] = integral;
    s[1] = d;
    s[2] = y;
    s[3] = u;
    s[4] = v;
    this.saturatedHigh = high;
    this.saturatedLow = low;
    this.integratorHeld = held;
    return u;
  }
}

export function createPidController(config: PidControllerConfig): PidStepper {
  return new PidController(config);
}
