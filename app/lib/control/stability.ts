/**
 * Closed-loop stability of L = C·P from the closed-loop poles, not from the margins (a
 * conditionally stable loop has GM < 1 and is stable; REFERENCES.md "Closed-loop stability").
 *
 * Sampled loop: the poles are the roots of χ(z) = z^(m+1)·A(z)·Dc(z) + Nc(z)·B(z), with
 * P(z) = B(z)/(z^(m+1)·A(z)) the ZOH plant of ./plant.ts and C(z) = Nc/Dc the controller of
 * ./pid.ts. They are counted, not located: the number inside the unit circle is the winding
 * number of χ(e^(jφ)), which costs one evaluation per point however long the delay line.
 *
 * Continuous loop: without dead time the poles are the roots of D + N (D = Dc·Dp, N = Nc·Np);
 * with dead time the zeros of p(s) = D(s) + N(s)e^(−θs) in the right half-plane are counted
 * from the phase of p(jω) along ω ≥ 0 (Stépán's formula).
 */
import { ControlInputError } from "./errors";
import { toParallelGains, type PidGains } from "./forms";
import { resolveDerivativeFilterTime, type DerivativeFilter } from "./pid";
import { discretisePlant, toTransferFunction, type DiscretePlant, type PlantModel } from "./plant";
import { evaluatePolynomialComplex, findPolynomialRoots, multiplyPolynomials, type Complex } from "./polynomial";

export interface StabilityVerdict {
  stable: boolean;
  /** Closed-loop poles outside the unit circle (sampled) or in the closed right half-plane. */
  unstablePoles: number;
}

export interface StabilityLoop {
  plant: PlantModel;
  controller?: { gains: PidGains; derivativeFilter?: DerivativeFilter };
  samplePeriod?: number;
}

/**
 * Most points a phase sweep may take: each costs a few polynomial evaluations, about 0.7 µs,
 * so this keeps a stability check under a second of CPU. Larger inputs are refused with
 * code "too_large".
 */
export const MAX_SWEEP_POINTS = 1_200_000;

function addPolynomials(a: readonly number[], b: readonly number[]): number[] {
  const n = Math.max(a.length, b.length);
  const out = new Array<number>(n).fill(0);
  for (let i = 0; i < a.length; i++) out[n - a.length + i] += a[i];
  for (let i = 0; i < b.length; i++) out[n - b.length + i] += b[i];
  return out;
}

const scale = (p: readonly number[], k: number) => p.map((c) => c * k);

/** The controller as Nc/Dc in s (continuous) or z (sampled), without common factors. */
function controllerPolynomials(loop: StabilityLoop): { nc: number[]; dc: number[] } {
  if (!loop.controller) return { nc: [1], dc: [1] };
  const gains = toParallelGains(loop.controller.gains);
  const tf = resolveDerivativeFilterTime(gains, loop.controller.derivativeFilter);
  if (loop.samplePeriod === undefined) {
    // kp + ki/s + kd·s/(Tf s + 1)
    const fI = gains.ki !== 0 ? [1, 0] : [1];
    const fD = gains.kd !== 0 && tf > 0 ? [tf, 1] : [1];
    let nc = scale(multiplyPolynomials(fI, fD), gains.kp);
    if (gains.ki !== 0) nc = addPolynomials(nc, scale(fD, gains.ki));
    if (gains.kd !== 0) nc = addPolynomials(nc, scale(multiplyPolynomials([1, 0], fI), gains.kd));
    return { nc, dc: multiplyPolynomials(fI, fD) };
  }
  // kp + ki·h/(z − 1) + bd(z − 1)/(z − ad), as in ./pid.ts
  const h = loop.samplePeriod;
  const ad = tf / (tf + h);
  const bd = gains.kd / (tf + h);
  const fI = gains.ki !== 0 ? [1, -1] : [1];
  const fD = bd !== 0 ? [1, -ad] : [1];
  let nc = scale(multiplyPolynomials(fI, fD), gains.kp);
  if (gains.ki !== 0) nc = addPolynomials(nc, scale(fD, gains.ki * h));
  if (bd !== 0) nc = addPolynomials(nc, scale(multiplyPolynomials([1, -1], fI), bd));
  return { nc, dc: multiplyPolynomials(fI, fD) };
}

/**
 * The ZOH plant as B(z)/(z^(m+1)·A(z)): A = det(zI − Φ) by Faddeev–LeVerrier, B from the
 * Markov parameters C·Φ^k·Γ (B(z) = C·adj(zI − Φ)(Γlate·z + Γearly) + D·A(z)).
 */
export function discretePlantPolynomials(discrete: DiscretePlant): { a: number[]; b: number[]; delay: number } {
  const n = discrete.order;
  const phi = discrete.phi;
  const a = [1];
  let m = identity(n);
  for (let k = 1; k <= n; k++) {
    const pm = multiplyMatrices(phi, m, n);
    let trace = 0;
    for (let i = 0; i < n; i++) trace += pm[i * n + i];
    const ak = -trace / k;
    a.push(ak);
    for (let i = 0; i < n; i++) pm[i * n + i] += ak;
    m = pm;
  }
  // Markov parameters of C(zI − Φ)⁻¹Γ: g_k = C·Φ^(k−1)·Γ; numerator coefficient j is
  // Σ_{i ≤ j} a_i·g_(j−i+1), j = 0 … n−1 (of z^(n−1−j)).
  const numerator = (gamma: Float64Array): number[] => {
    const markov: number[] = [];
    let v = Float64Array.from(gamma);
    for (let k = 0; k < n; k++) {
      let g = 0;
      for (let i = 0; i < n; i++) g += discrete.c[i] * v[i];
      markov.push(g);
      const next = new Float64Array(n);
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) next[i] += phi[i * n + j] * v[j];
      v = next;
    }
    const out: number[] = [];
    for (let j = 0; j < n; j++) {
      let s = 0;
      for (let i = 0; i <= j; i++) s += a[i] * markov[j - i];
      out.push(s);
    }
    return out;
  };
  // z·Bl(z) + Be(z) + D·A(z), all of degree ≤ n.
  let b = addPolynomials([...numerator(discrete.gammaLate), 0], numerator(discrete.gammaEarly));
  b = addPolynomials(b, scale(a, discrete.d));
  return { a, b, delay: discrete.delaySamples + 1 };
}

function identity(n: number): Float64Array {
  const m = new Float64Array(n * n);
  for (let i = 0; i < n; i++) m[i * n + i] = 1;
  return m;
}

function multiplyMatrices(x: Float64Array, y: Float64Array, n: number): Float64Array {
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) for (let j = 0; j < n; j++) out[i * n + j] += x[i * n + k] * y[k * n + j];
  return out;
}

const wrap = (x: number) => x - 2 * Math.PI * Math.round(x / (2 * Math.PI));

/**
 * The unwrapped change of arg f(x) from grid[0] to the last grid point. A step whose phase
 * moves by more than π/4 is halved until it does not (or is tiny), so a passage close to
 * zero is followed. `zero` is set when |f| comes within `tolerance(x)` of zero (a pole on
 * the boundary).
 */
function sweepArgument(f: (x: number) => Complex, grid: readonly number[], tolerance: (x: number) => number): { change: number; zero: boolean } {
  let change = 0;
  let zero = false;
  const argAt = (x: number) => {
    const v = f(x);
    if (Math.hypot(v.re, v.im) <= tolerance(x)) zero = true;
    return Math.atan2(v.im, v.re);
  };
  const segment = (a: number, b: number, argA: number, argB: number, depth: number): number => {
    const d = wrap(argB - argA);
    // A phase that is not a number (overflow) is not subdivided: the caller refuses it.
    if (!(Math.abs(d) > Math.PI / 4) || depth > 40 || b - a <= 1e-15 * Math.max(1, Math.abs(a))) return d;
    const mid = 0.5 * (a + b);
    const argMid = argAt(mid);
    return segment(a, mid, argA, argMid, depth + 1) + segment(mid, b, argMid, argB, depth + 1);
  };
  let previous = argAt(grid[0]);
  for (let i = 1; i < grid.length; i++) {
    const current = argAt(grid[i]);
    change += segment(grid[i - 1], grid[i], previous, current, 0);
    previous = current;
  }
  return { change, zero };
}

function evaluateAt(p: readonly number[], re: number, im: number): Complex {
  return evaluatePolynomialComplex(p, re, im);
}

function polynomialScale(p: readonly number[], radius: number): number {
  let s = 0;
  let power = 1;
  for (let i = p.length - 1; i >= 0; i--) {
    s += Math.abs(p[i]) * power;
    power *= radius;
  }
  return s;
}

function sampledVerdict(loop: StabilityLoop & { samplePeriod: number }): StabilityVerdict {
  const discrete = discretisePlant(loop.plant, loop.samplePeriod);
  const { a, b, delay } = discretePlantPolynomials(discrete);
  const { nc, dc } = controllerPolynomials(loop);
  const q = multiplyPolynomials(a, dc);
  const r = multiplyPolynomials(nc, b);
  requireFinitePolynomials(q, r);
  const degree = delay + q.length - 1;
  // Four points per unit of degree: z^(m+1) turns by at most π/4 per step.
  const points = 4 * (degree + 8);
  if (points > MAX_SWEEP_POINTS) {
    throw new ControlInputError(
      "plant.deadTime",
      `is ${delay.toLocaleString("en")} samples long at this sample period; checking stability is limited to ${(MAX_SWEEP_POINTS / 4).toLocaleString("en")}`,
      "too_large",
    );
  }
  const grid = Array.from({ length: points + 1 }, (_, i) => (Math.PI * i) / points);
  const size = polynomialScale(q, 1) + polynomialScale(r, 1);
  // χ(e^(jφ)) = e^(j(m+1)φ)·Q + R
  const chi = (phase: number): Complex => {
    const zr = Math.cos(phase);
    const zi = Math.sin(phase);
    const qv = evaluateAt(q, zr, zi);
    const rv = evaluateAt(r, zr, zi);
    const cr = Math.cos(delay * phase);
    const ci = Math.sin(delay * phase);
    return { re: cr * qv.re - ci * qv.im + rv.re, im: cr * qv.im + ci * qv.re + rv.im };
  };
  const sweep = sweepArgument(chi, grid, () => 1e-12 * size);
  // Real coefficients: the half circle carries half the winding.
  const inside = Math.round(sweep.change / Math.PI);
  const unstablePoles = degree - inside;
  return { stable: !sweep.zero && unstablePoles === 0, unstablePoles: Math.max(unstablePoles, sweep.zero ? 1 : 0) };
}

function continuousVerdict(loop: StabilityLoop): StabilityVerdict {
  const tf = toTransferFunction(loop.plant);
  const { nc, dc } = controllerPolynomials(loop);
  const d = multiplyPolynomials(dc, tf.denominator);
  const n = multiplyPolynomials(nc, tf.numerator);
  requireFinitePolynomials(d, n);
  if (tf.deadTime === 0) {
    const p = addPolynomials(d, n);
    const roots = findPolynomialRoots(p);
    requireFinitePolynomials(roots.flatMap((z) => [z.re, z.im]));
    const size = Math.max(1, ...roots.map((z) => Math.hypot(z.re, z.im)));
    const unstablePoles = roots.filter((z) => z.re >= -1e-9 * size).length;
    // A polynomial whose leading terms cancel (L(∞) = −1) has lost degree: roots at infinity.
    const lost = Math.max(0, d.length - p.length + leadingZeros(p));
    return { stable: unstablePoles === 0 && lost === 0, unstablePoles: unstablePoles + lost };
  }
  const theta = tf.deadTime;
  const degreeD = d.length - 1;
  const degreeN = n.length - 1 - leadingZeros(n);
  // A biproper loop with dead time is of neutral type: |L(j∞)| ≥ 1 leaves infinitely many
  // roots at or right of the axis (memory: Hale & Verduyn Lunel, neutral equations).
  const lInf = degreeN === degreeD ? Math.abs(n[leadingZeros(n)] / d[0]) : degreeN > degreeD ? Infinity : 0;
  if (lInf >= 1) return { stable: false, unstablePoles: Infinity };
  const rootsD = findPolynomialRoots(d);
  requireFinitePolynomials(rootsD.flatMap((z) => [z.re, z.im]));
  const magnitude = (w: number) => {
    const nv = evaluateAt(n, 0, w);
    const dv = evaluateAt(d, 0, w);
    return Math.hypot(nv.re, nv.im) / Math.hypot(dv.re, dv.im);
  };
  // ω* past every root of D and past the last frequency where |L| ≥ 1 (|L| ignores θ).
  const corners = [...rootsD, ...findPolynomialRoots(n)].map((z) => Math.hypot(z.re, z.im)).filter((x) => x > 0);
  const top = Math.max(1 / theta, ...corners);
  const bottom = Math.min(1 / theta, ...corners) * 1e-4;
  let high = top * 1e3;
  for (let i = 0; i < 30 && magnitude(high) >= 1; i++) high *= 10;
  let last = 0;
  const perDecade = 100;
  const decades = Math.log10(high / bottom);
  for (let i = Math.ceil(decades * perDecade); i >= 0; i--) {
    const w = bottom * 10 ** (i / perDecade);
    if (magnitude(w) >= 1) {
      last = bottom * 10 ** ((i + 1) / perDecade);
      break;
    }
  }
  const omegaStar = Math.max(last, 1.5 * Math.max(0, ...rootsD.map((z) => Math.hypot(z.re, z.im))), 1e-9 * top);
  // Grid on [0, ω*]: logarithmic, and linear enough that θ·Δω ≤ π/8.
  const linear = Math.PI / 8 / theta;
  const points = omegaStar / linear;
  if (!(points <= MAX_SWEEP_POINTS)) {
    throw new ControlInputError("plant.deadTime", "is too long for this loop's bandwidth: checking its stability would take too long", "too_large");
  }
  const grid = [0];
  let w = Math.min(bottom, omegaStar);
  while (w < omegaStar) {
    grid.push(w);
    w = Math.min(w * 10 ** (1 / perDecade), w + linear);
  }
  grid.push(omegaStar);
  const size = (x: number) => 1e-12 * (polynomialScale(d, x) + polynomialScale(n, x));
  const p = (x: number): Complex => {
    const dv = evaluateAt(d, 0, x);
    const nv = evaluateAt(n, 0, x);
    const cr = Math.cos(theta * x);
    const ci = -Math.sin(theta * x);
    return { re: dv.re + nv.re * cr - nv.im * ci, im: dv.im + nv.re * ci + nv.im * cr };
  };
  const sweep = sweepArgument(p, grid, size);
  // Beyond ω*: arg D(jω) goes to deg D·π/2 factor by factor, 1 + L stays in the right
  // half-plane and ends at arg 0.
  let tail = 0;
  for (const z of rootsD) tail += Math.PI / 2 - Math.atan2(omegaStar - z.im, -z.re);
  const dv = evaluateAt(d, 0, omegaStar);
  const nv = evaluateAt(n, 0, omegaStar);
  const l = complexRatio(nv, dv);
  const cr = Math.cos(theta * omegaStar);
  const ci = -Math.sin(theta * omegaStar);
  tail -= Math.atan2(l.re * ci + l.im * cr, 1 + l.re * cr - l.im * ci);
  const total = sweep.change + tail;
  const count = Math.round(((degreeD * Math.PI) / 2 - total) / Math.PI);
  return { stable: !sweep.zero && count === 0, unstablePoles: Math.max(count, sweep.zero ? 1 : 0) };
}

function complexRatio(a: Complex, b: Complex): Complex {
  const dd = b.re * b.re + b.im * b.im;
  return { re: (a.re * b.re + a.im * b.im) / dd, im: (a.im * b.re - a.re * b.im) / dd };
}

function leadingZeros(p: readonly number[]): number {
  let i = 0;
  while (i < p.length - 1 && p[i] === 0) i++;
  return i;
}

function requireFinitePolynomials(...polynomials: (readonly number[])[]): void {
  for (const p of polynomials) {
    if (!p.every(Number.isFinite)) throw new ControlInputError("plant", "has coefficients too large or too small to check the loop's stability");
  }
}

/** Is the closed loop stable? From its poles (see the file header). */
export function assessClosedLoopStability(loop: StabilityLoop): StabilityVerdict {
  const verdict = loop.samplePeriod !== undefined ? sampledVerdict({ ...loop, samplePeriod: loop.samplePeriod }) : continuousVerdict(loop);
  if (Number.isNaN(verdict.unstablePoles)) throw new ControlInputError("plant", "is out of the range in which the loop's stability can be checked");
  return verdict;
}
