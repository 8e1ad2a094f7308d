/**
 * Plant models, their exact zero-order-hold discretisation and a sample-by-sample simulator.
 *
 * Dead time θ = m·h + f with 0 ≤ f < h. Over one sample interval [kh, (k+1)h) the delayed
 * input is u[k−m−1] for the first f seconds and u[k−m] for the rest, so
 *   x[k+1] = Φ x[k] + Γearly·u[k−m−1] + Γlate·u[k−m]
 *   Φ = e^{Ah},  Γlate = ∫₀^{h−f} e^{As} ds·B,  Γearly = e^{A(h−f)} ∫₀^{f} e^{As} ds·B
 * which is exact for a piecewise-constant input (the modified z-transform in state form).
 * The measurement at sample k is taken just before u[k] is applied:
 *   y[k] = C x[k] + D·u[k−m−1]
 * so a biproper plant never creates an algebraic loop with the controller.
 */
import { expm, matrix, type Matrix } from "mathjs";
import { ControlInputError, requireFinite, requireNonNegative, requirePositive } from "./errors";
import { evaluatePolynomialComplex, trimPolynomial, type Complex } from "./polynomial";

/** K e^{−θs}/(τs + 1) */
export interface FopdtModel {
  type: "fopdt";
  gain: number;
  timeConstant: number;
  deadTime: number;
}

/** K e^{−θs}/((τ1 s + 1)(τ2 s + 1)) */
export interface SopdtModel {
  type: "sopdt";
  gain: number;
  timeConstant: number;
  timeConstant2: number;
  deadTime: number;
}

/** k' e^{−θs}/s */
export interface IpdtModel {
  type: "ipdt";
  gain: number;
  deadTime: number;
}

/** num(s)/den(s)·e^{−θs}, coefficients highest power first. */
export interface TransferFunctionModel {
  type: "tf";
  numerator: number[];
  denominator: number[];
  deadTime?: number;
}

export type PlantModel = FopdtModel | SopdtModel | IpdtModel | TransferFunctionModel;

export interface TransferFunction {
  numerator: number[];
  /** Monic (leading coefficient 1). */
  denominator: number[];
  deadTime: number;
}

export interface StateSpace {
  /** n×n, row-major rows. */
  a: number[][];
  b: number[];
  c: number[];
  d: number;
}

function checkCoefficients(field: string, values: unknown): number[] {
  if (!Array.isArray(values) || values.length === 0) {
    throw new ControlInputError(field, "must be a non-empty array of coefficients");
  }
  values.forEach((v, i) => requireFinite(`${field}[${i}]`, v as number));
  return values as number[];
}

/** Validates a plant and returns its transfer function; throws ControlInputError naming the field. */
export function toTransferFunction(plant: PlantModel): TransferFunction {
  if (plant === null || typeof plant !== "object") throw new ControlInputError("plant", "must be a plant model");
  switch (plant.type) {
    case "fopdt": {
      const k = requireFinite("plant.gain", plant.gain);
      const tau = requirePositive("plant.timeConstant", plant.timeConstant);
      const theta = requireNonNegative("plant.deadTime", plant.deadTime);
      return { numerator: [k / tau], denominator: [1, 1 / tau], deadTime: theta };
    }
    case "sopdt": {
      const k = requireFinite("plant.gain", plant.gain);
      const t1 = requirePositive("plant.timeConstant", plant.timeConstant);
      const t2 = requirePositive("plant.timeConstant2", plant.timeConstant2);
      const theta = requireNonNegative("plant.deadTime", plant.deadTime);
      const p = t1 * t2;
      return { numerator: [k / p], denominator: [1, (t1 + t2) / p, 1 / p], deadTime: theta };
    }
    case "ipdt": {
      const k = requireFinite("plant.gain", plant.gain);
      const theta = requireNonNegative("plant.deadTime", plant.deadTime);
      return { numerator: [k], denominator: [1, 0], deadTime: theta };
    }
    case "tf": {
      const num = trimPolynomial(checkCoefficients("plant.numerator", plant.numerator));
      const den = trimPolynomial(checkCoefficients("plant.denominator", plant.denominator));
      if (den.length === 1 && den[0] === 0) throw new ControlInputError("plant.denominator", "must not be all zero");
      if (num.length === 1 && num[0] === 0) throw new ControlInputError("plant.numerator", "must not be all zero");
      if (num.length > den.length) {
        throw new ControlInputError("plant.numerator", "degree must not exceed the denominator's (the plant must be proper)");
      }
      const theta = requireNonNegative("plant.deadTime", plant.deadTime ?? 0);
      const lead = den[0];
      return { numerator: num.map((c) => c / lead), denominator: den.map((c) => c / lead), deadTime: theta };
    }
    default:
      throw new ControlInputError("plant.type", "must be fopdt, sopdt, ipdt or tf");
  }
}

/** Controllable canonical realisation of num/den (den monic). */
export function toStateSpace(tf: TransferFunction): StateSpace {
  const den = tf.denominator;
  const n = den.length - 1;
  const num = new Array<number>(n + 1).fill(0);
  for (let i = 0; i < tf.numerator.length; i++) num[n + 1 - tf.numerator.length + i] = tf.numerator[i];
  const d = num[0];
  const a: number[][] = [];
  for (let i = 0; i < n; i++) {
    const row = new Array<number>(n).fill(0);
    if (i < n - 1) row[i + 1] = 1;
    else for (let j = 0; j < n; j++) row[j] = -den[n - j];
    a.push(row);
  }
  const b = new Array<number>(n).fill(0);
  if (n > 0) b[n - 1] = 1;
  // Strictly proper remainder: (num − d·den)/den; c holds its coefficients lowest power first.
  const c = new Array<number>(n).fill(0);
  for (let j = 0; j < n; j++) c[j] = num[n - j] - d * den[n - j];
  return { a, b, c, d };
}

/** exp([[A, B],[0, 0]]·t) → e^{At} and ∫₀ᵗ e^{As} ds·B together, valid for singular A. */
export function computeHoldIntegral(ss: StateSpace, t: number): { phi: number[][]; gamma: number[] } {
  const n = ss.a.length;
  if (n === 0) return { phi: [], gamma: [] };
  if (t === 0) {
    return { phi: ss.a.map((_, i) => ss.a.map((__, j) => (i === j ? 1 : 0))), gamma: new Array<number>(n).fill(0) };
  }
  const m: number[][] = [];
  for (let i = 0; i <= n; i++) {
    const row = new Array<number>(n + 1).fill(0);
    if (i < n) {
      for (let j = 0; j < n; j++) row[j] = ss.a[i][j] * t;
      row[n] = ss.b[i] * t;
    }
    m.push(row);
  }
  const e = (expm(matrix(m)) as Matrix).toArray() as number[][];
  return { phi: e.slice(0, n).map((row) => row.slice(0, n)), gamma: e.slice(0, n).map((row) => row[n]) };
}

export interface DiscretePlant {
  samplePeriod: number;
  order: number;
  /** Φ, row-major n×n. */
  phi: Float64Array;
  /** Applies u[k−m−1] (the part of the interval before the fractional delay elapses). */
  gammaEarly: Float64Array;
  /** Applies u[k−m]. */
  gammaLate: Float64Array;
  c: Float64Array;
  d: number;
  /** Whole samples of delay m. */
  delaySamples: number;
  /** Fractional delay f in seconds, 0 ≤ f < h. */
  fractionalDelay: number;
  /** Continuous realisation the coefficients came from. */
  stateSpace: StateSpace;
}

/** Exact ZOH discretisation at period h (see the file header for the delay handling). */
export function discretisePlant(plant: PlantModel, samplePeriod: number): DiscretePlant {
  const h = requirePositive("samplePeriod", samplePeriod);
  const tf = toTransferFunction(plant);
  const ss = toStateSpace(tf);
  const n = ss.a.length;
  let m = Math.floor(tf.deadTime / h);
  let f = tf.deadTime - m * h;
  // θ/h that is an integer up to rounding (0.5/0.01) must not become (m−1) samples + h.
  const nearest = Math.round(tf.deadTime / h);
  if (Math.abs(tf.deadTime / h - nearest) < 1e-9) {
    m = nearest;
    f = 0;
  }
  const full = computeHoldIntegral(ss, h);
  const late = computeHoldIntegral(ss, h - f);
  const early = computeHoldIntegral(ss, f);
  const phi = new Float64Array(n * n);
  const gammaLate = new Float64Array(n);
  const gammaEarly = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) phi[i * n + j] = full.phi[i][j];
    gammaLate[i] = late.gamma[i];
    let acc = 0;
    for (let j = 0; j < n; j++) acc += late.phi[i][j] * early.gamma[j];
    gammaEarly[i] = f === 0 ? 0 : acc;
  }
  return {
    samplePeriod: h,
    order: n,
    phi,
    gammaEarly,
    gammaLate,
    c: Float64Array.from(ss.c),
    d: ss.d,
    delaySamples: m,
    fractionalDelay: f,
    stateSpace: ss,
  };
}

/** Sample-by-sample plant: read `output()` at sample k, then `advance(u[k])`. No allocation per step. */
export interface PlantSimulator {
  output(): number;
  advance(u: number): void;
  /** Back to rest with the delay line full of `input` (default 0). */
  reset(input?: number): void;
  /**
   * Go on with new coefficients (an aged or re-identified plant) without a jump: the output
   * and the inputs in the delay line are kept. First-order plants only (their state is
   * rescaled so y is unchanged); the sample period and whole samples of delay must match.
   */
  changeModel(discrete: DiscretePlant): void;
  readonly discrete: DiscretePlant;
}

// The first-order simulator keeps its numbers in one Float64Array (raw doubles, no boxed
// fields), with literal slots: 0 x, 1 Φ, 2 Γearly, 3 Γlate, 4 C, 5 D.

/**
 * First-order plants (FOPDT, IPDT) get their own small class: device simulators run them
 * millions of times, and small methods are what the JIT inlines into the caller's loop.
 */
class FirstOrderPlantSimulator implements PlantSimulator {
  discrete: DiscretePlant;
  private readonly k = new Float64Array(6);
  private readonly history: Float64Array;
  private readonly length: number;
  private readonly m: number;
  private head = 0;

  constructor(discrete: DiscretePlant, input: number, horizon: number) {
    this.discrete = discrete;
    this.m = Math.min(discrete.delaySamples, horizon);
    this.length = this.m + 2;
    this.history = new Float64Array(this.length);
    this.k[1] = discrete.phi[0];
    this.k[2] = discrete.gammaEarly[0];
    this.k[3] = discrete.gammaLate[0];
    this.k[4] = discrete.c[0];
    this.k[5] = discrete.d;
    this.reset(input);
  }

  reset(input = 0): void {
    requireFinite("input", input);
    this.k[0] = 0;
    this.history.fill(input);
    this.head = 0;
  }

  changeModel(discrete: DiscretePlant): void {
    checkSameShape(this.discrete, discrete);
    const k = this.k;
    // y = C·x + D·u_old: keep C·x (the part that is the state) across the change.
    const cx = k[4] * k[0];
    k[1] = discrete.phi[0];
    k[2] = discrete.gammaEarly[0];
    k[3] = discrete.gammaLate[0];
    k[4] = discrete.c[0];
    k[5] = discrete.d;
    k[0] = k[4] === 0 ? 0 : cx / k[4];
    this.discrete = discrete;
  }

  output(): number {
    // history[head − m − 1] holds u[k−m−1]; head is where u[k] will be written.
    let idx = this.head - this.m - 1;
    if (idx < 0) idx += this.length;
    const k = this.k;
    return k[4] * k[0] + k[5] * this.history[idx];
  }

  advance(u: number): void {
    const history = this.history;
    const length = this.length;
    const head = this.head;
    history[head] = u;
    let late = head - this.m;
    if (late < 0) late += length;
    const early = late === 0 ? length - 1 : late - 1;
    const k = this.k;
    k[0] = k[1] * k[0] + k[2] * history[early] + k[3] * history[late];
    this.head = head + 1 === length ? 0 : head + 1;
  }
}

class DiscretePlantSimulator implements PlantSimulator {
  readonly discrete: DiscretePlant;
  private readonly n: number;
  private readonly x: Float64Array;
  private readonly xNext: Float64Array;
  private readonly history: Float64Array;
  private readonly length: number;
  private readonly m: number;
  private head = 0;

  constructor(discrete: DiscretePlant, input: number, horizon: number) {
    this.discrete = discrete;
    this.n = discrete.order;
    this.x = new Float64Array(this.n);
    this.xNext = new Float64Array(this.n);
    this.m = Math.min(discrete.delaySamples, horizon);
    this.length = this.m + 2;
    this.history = new Float64Array(this.length);
    this.reset(input);
  }

  reset(input = 0): void {
    requireFinite("input", input);
    this.x.fill(0);
    this.history.fill(input);
    this.head = 0;
  }

  changeModel(): void {
    // A higher-order state in canonical form has no physical meaning to carry across.
    throw new ControlInputError("plant", "only a first-order plant can change its model while running");
  }

  output(): number {
    let idx = this.head - this.m - 1;
    if (idx < 0) idx += this.length;
    let y = this.discrete.d * this.history[idx];
    const c = this.discrete.c;
    for (let i = 0; i < this.n; i++) y += c[i] * this.x[i];
    return y;
  }

  advance(u: number): void {
    const len = this.length;
    const head = this.head;
    this.history[head] = u;
    let iLate = head - this.m;
    if (iLate < 0) iLate += len;
    const iEarly = iLate === 0 ? len - 1 : iLate - 1;
    const uLate = this.history[iLate];
    const uEarly = this.history[iEarly];
    this.head = head + 1 === len ? 0 : head + 1;
    const n = this.n;
    const { phi, gammaEarly, gammaLate } = this.discrete;
    const x = this.x;
    const next = this.xNext;
    for (let i = 0; i < n; i++) {
      let acc = gammaEarly[i] * uEarly + gammaLate[i] * uLate;
      const row = i * n;
      for (let j = 0; j < n; j++) acc += phi[row + j] * x[j];
      next[i] = acc;
    }
    x.set(next);
  }
}

function checkSameShape(current: DiscretePlant, next: DiscretePlant): void {
  if (next.order !== current.order) throw new ControlInputError("plant", "must keep its order");
  if (next.samplePeriod !== current.samplePeriod) throw new ControlInputError("samplePeriod", "must not change");
  if (next.delaySamples !== current.delaySamples) throw new ControlInputError("plant.deadTime", "must keep its whole samples of delay");
}

/**
 * A plant simulator at rest, its delay line filled with `initialInput` (default 0). Give
 * `horizon`, the number of samples it will run, when it is known: a dead time longer than
 * that only ever delivers the initial input, so the delay line is not made longer (θ/h may
 * be 10⁹, which would otherwise allocate gigabytes).
 */
export function createPlantSimulator(discrete: DiscretePlant, initialInput = 0, horizon = Infinity): PlantSimulator {
  if (!(horizon >= 0)) throw new ControlInputError("horizon", "must be a number of samples");
  return discrete.order === 1
    ? new FirstOrderPlantSimulator(discrete, initialInput, horizon)
    : new DiscretePlantSimulator(discrete, initialInput, horizon);
}

/** P(jω) of the continuous plant including e^{−jωθ}. */
export function evaluatePlantFrequency(tf: TransferFunction, omega: number): Complex {
  const num = evaluatePolynomialComplex(tf.numerator, 0, omega);
  const den = evaluatePolynomialComplex(tf.denominator, 0, omega);
  const dd = den.re * den.re + den.im * den.im;
  const qr = (num.re * den.re + num.im * den.im) / dd;
  const qi = (num.im * den.re - num.re * den.im) / dd;
  const cr = Math.cos(omega * tf.deadTime);
  const ci = -Math.sin(omega * tf.deadTime);
  return { re: qr * cr - qi * ci, im: qr * ci + qi * cr };
}

/**
 * P(z) at z = e^{jωh} of the discretised plant, in the simulator's sampling convention:
 * C(zI − Φ)⁻¹(Γlate z^{−m} + Γearly z^{−m−1}) + D z^{−m−1}.
 */
export function evaluateDiscretePlantFrequency(discrete: DiscretePlant, omega: number): Complex {
  const n = discrete.order;
  const h = discrete.samplePeriod;
  const m = discrete.delaySamples;
  const zr = Math.cos(omega * h);
  const zi = Math.sin(omega * h);
  // z^{−m} and z^{−m−1}
  const wm = -omega * h * m;
  const lateR = Math.cos(wm);
  const lateI = Math.sin(wm);
  const earlyR = Math.cos(wm - omega * h);
  const earlyI = Math.sin(wm - omega * h);
  let yr = discrete.d * earlyR;
  let yi = discrete.d * earlyI;
  if (n === 0) return { re: yr, im: yi };
  // Solve (zI − Φ) w = rhs by Gaussian elimination with partial pivoting (n is small).
  const ar = new Float64Array(n * n);
  const ai = new Float64Array(n * n);
  const br = new Float64Array(n);
  const bi = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      ar[i * n + j] = -discrete.phi[i * n + j];
      ai[i * n + j] = 0;
    }
    ar[i * n + i] += zr;
    ai[i * n + i] += zi;
    br[i] = discrete.gammaLate[i] * lateR + discrete.gammaEarly[i] * earlyR;
    bi[i] = discrete.gammaLate[i] * lateI + discrete.gammaEarly[i] * earlyI;
  }
  solveComplexInPlace(n, ar, ai, br, bi);
  for (let i = 0; i < n; i++) {
    yr += discrete.c[i] * br[i];
    yi += discrete.c[i] * bi[i];
  }
  return { re: yr, im: yi };
}

function solveComplexInPlace(n: number, ar: Float64Array, ai: Float64Array, br: Float64Array, bi: Float64Array): void {
  for (let col = 0; col < n; col++) {
    let pivot = col;
    let best = -1;
    for (let r = col; r < n; r++) {
      const mag = Math.hypot(ar[r * n + col], ai[r * n + col]);
      if (mag > best) {
        best = mag;
        pivot = r;
      }
    }
    if (pivot !== col) {
      for (let j = 0; j < n; j++) {
        swap(ar, pivot * n + j, col * n + j);
        swap(ai, pivot * n + j, col * n + j);
      }
      swap(br, pivot, col);
      swap(bi, pivot, col);
    }
    const pr = ar[col * n + col];
    const pi = ai[col * n + col];
    const pd = pr * pr + pi * pi;
    for (let r = col + 1; r < n; r++) {
      const xr = ar[r * n + col];
      const xi = ai[r * n + col];
      const fr = (xr * pr + xi * pi) / pd;
      const fi = (xi * pr - xr * pi) / pd;
      for (let j = col; j < n; j++) {
        const cr = ar[col * n + j];
        const ci = ai[col * n + j];
        ar[r * n + j] -= fr * cr - fi * ci;
        ai[r * n + j] -= fr * ci + fi * cr;
      }
      br[r] -= fr * br[col] - fi * bi[col];
      bi[r] -= fr * bi[col] + fi * br[col];
    }
  }
  for (let r = n - 1; r >= 0; r--) {
    let sr = br[r];
    let si = bi[r];
    for (let j = r + 1; j < n; j++) {
      sr -= ar[r * n + j] * br[j] - ai[r * n + j] * bi[j];
      si -= ar[r * n + j] * bi[j] + ai[r * n + j] * br[j];
    }
    const pr = ar[r * n + r];
    const pi = ai[r * n + r];
    const pd = pr * pr + pi * pi;
    br[r] = (sr * pr + si * pi) / pd;
    bi[r] = (si * pr - sr * pi) / pd;
  }
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}
