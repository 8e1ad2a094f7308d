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
 *        back-calculation  I += ki·h·e + g·(u − v),  g = min(1, h/Tt)
 *      then, unless anti-windup is "none", the integrator state is held inside the output
 *      range (see deriveIntegratorLimits) widened by whatever P + D currently takes off it:
 *        I ∈ [min(uMin, uMin − P − D), max(uMax, uMax − P − D)]
 * with e = r − y (unweighted: the integral must drive y to r whatever b is).
 * In standard form ad = Td/(Td + N·h) and bd = Kc·N·ad, which is the same thing.
 *
 * Why the widening: with b < 1 the steady state needs I = u* − P with P = kp(b·r − y) ≠ 0,
 * which can lie outside the output range although u* lies inside it (b = 0, r = 0.8,
 * Kc = 2 needs I = 2.4 for u = 0.8 in [0, 1]). Bounding I by the output range alone then
 * parks y short of r. The widened bound still never lets I push v past a limit by itself.
 *
 * Why g = min(1, h/Tt): while saturated, back-calculation moves the integrator towards the
 * value I* that puts v on the limit as I⁺ − I* = (1 − h/Tt)(I − I*); for h/Tt > 1 that
 * overshoots and for h/Tt > 2 it diverges. Bounding the gain at 1 (dead-beat tracking) keeps
 * it monotone for every h/Tt; the default Tt is never below h, so defaults stay at h/Tt ≤ 1.
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
  /** Back-calculation tracking time Tt (s); default √(Ti·Td) for PID, Ti for PI, never below h. */
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
  /**
   * Bumpless gain change: switch to new gains and move the integral so that the unlimited
   * output at the last set point and measurement is unchanged (Åström & Hägglund 1995,
   * "bumpless parameter changes"; see REFERENCES.md). Limits, filter N and the other
   * settings stay as configured.
   */
  setGains(gains: PidGains): void;
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

/**
 * Tt default: √(Ti·Td) = √(kd/ki) with derivative action, Ti = kp/ki without, and never
 * below the sample period h (a shorter Tt cannot be tracked in one sample anyway).
 */
export function resolveTrackingTime(gains: ParallelGains, trackingTime: number | undefined, samplePeriod = 0): number {
  if (trackingTime !== undefined) return requirePositive("trackingTime", trackingTime);
  if (gains.ki === 0) return Infinity;
  if (gains.kd !== 0 && Math.sign(gains.kd) === Math.sign(gains.ki)) return Math.max(Math.sqrt(gains.kd / gains.ki), samplePeriod);
  if (gains.kp !== 0 && Math.sign(gains.kp) === Math.sign(gains.ki)) return Math.max(gains.kp / gains.ki, samplePeriod);
  throw new ControlInputError("trackingTime", "is required when Ti is undefined (kp is zero)");
}

// Coefficients and state live in Float64Arrays rather than object fields so the hot loop
// reads and writes raw doubles, and step() is kept small and branch-light so the JIT inlines
// it into the caller's loop (a call that is not inlined boxes its double arguments).
// Slots are literal numbers: a named module constant costs a context load per access.
//   k: 0 kp, 1 ki, 2 ki·h, 3 b, 4 ad, 5 bd, 6 uMin, 7 uMax, 8 min(1, h/Tt) (0 unless
//      back-calculation), 9 integral min, 10 integral max, 11 clamping on (1) / off (0)
//   s: 0 integral I, 1 derivative D, 2 previous y, 3 u, 4 v, 5 previous r

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
  k[8] = mode === "back-calculation" && gains.ki !== 0 ? Math.min(1, h / resolveTrackingTime(gains, config.trackingTime, h)) : 0;
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
  gains: Readonly<ParallelGains>;
  saturatedHigh = false;
  saturatedLow = false;
  integratorHeld = false;

  private readonly k = new Float64Array(12);
  private readonly s = new Float64Array(6);
  private readonly config: PidControllerConfig;
  private after: boolean;
  private first = true;

  constructor(config: PidControllerConfig) {
    const resolved = resolvePidCoefficients(config);
    this.config = config;
    this.gains = Object.freeze(resolved.gains);
    this.k.set(resolved.k);
    this.after = resolved.after;
    this.reset(config.initialIntegral ?? 0);
  }

  setGains(gains: PidGains): void {
    const resolved = resolvePidCoefficients({ ...this.config, gains });
    const k = this.k;
    const s = this.s;
    if (!this.first) {
      // Keep v = P + I + D at the last r and y: the derivative state is rescaled to the new
      // kd (it is kd times a filtered slope), the integral takes up the rest.
      const r = s[5];
      const y = s[2];
      const n = resolved.k;
      const dNew = this.gains.kd !== 0 ? (s[1] * resolved.gains.kd) / this.gains.kd : 0;
      const pOld = k[0] * (k[3] * r - y);
      const pNew = n[0] * (n[3] * r - y);
      s[0] = s[0] + pOld + s[1] - pNew - dNew;
      s[1] = dNew;
    }
    k.set(resolved.k);
    this.gains = Object.freeze(resolved.gains);
    this.after = resolved.after;
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
    const p = k[0] * (k[3] * r - y);
    const v = p + s[0] + d;
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
    // The output range, widened by what P + D takes off it (see the header).
    if (integral > k[10] || integral < k[9]) {
      const pd = p + d;
      const iMax = pd < 0 ? k[10] - pd : k[10];
      const iMin = pd > 0 ? k[9] - pd : k[9];
      if (integral > iMax) {
        integral = iMax;
        held = true;
      } else if (integral < iMin) {
        integral = iMin;
        held = true;
      }
    }
    s[0] = integral;
    s[1] = d;
    s[2] = y;
    s[3] = u;
    s[4] = v;
    s[5] = r;
    this.saturatedHigh = high;
    this.saturatedLow = low;
    this.integratorHeld = held;
    return u;
  }
}

export function createPidController(config: PidControllerConfig): PidStepper {
  return new PidController(config);
}
