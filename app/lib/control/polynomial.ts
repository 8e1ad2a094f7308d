/**
 * Small real-coefficient polynomial and complex helpers. Coefficients are highest power
 * first, matching how transfer functions are written on paper.
 */

export interface Complex {
  re: number;
  im: number;
}

export function evaluatePolynomialReal(coefficients: readonly number[], x: number): number {
  let acc = 0;
  for (let i = 0; i < coefficients.length; i++) acc = acc * x + coefficients[i];
  return acc;
}

/** Horner's rule at a complex point. */
export function evaluatePolynomialComplex(coefficients: readonly number[], re: number, im: number): Complex {
  let ar = 0;
  let ai = 0;
  for (let i = 0; i < coefficients.length; i++) {
    const nr = ar * re - ai * im + coefficients[i];
    ai = ar * im + ai * re;
    ar = nr;
  }
  return { re: ar, im: ai };
}

export function multiplyPolynomials(a: readonly number[], b: readonly number[]): number[] {
  const out = new Array<number>(a.length + b.length - 1).fill(0);
  for (let i = 0; i < a.length; i++) for (let j = 0; j < b.length; j++) out[i + j] += a[i] * b[j];
  return out;
}

/** Drops leading zeros so the degree is the true degree (a zero polynomial stays [0]). */
export function trimPolynomial(coefficients: readonly number[]): number[] {
  let start = 0;
  while (start < coefficients.length - 1 && coefficients[start] === 0) start++;
  return coefficients.slice(start);
}

export function complexMultiply(a: Complex, b: Complex): Complex {
  return { re: a.re * b.re - a.im * b.im, im: a.re * b.im + a.im * b.re };
}

export function complexDivide(a: Complex, b: Complex): Complex {
  const d = b.re * b.re + b.im * b.im;
  return { re: (a.re * b.re + a.im * b.im) / d, im: (a.im * b.re - a.re * b.im) / d };
}

export function complexAbs(a: Complex): number {
  return Math.hypot(a.re, a.im);
}

/**
 * All complex roots by simultaneous (Durand–Kerner) iteration. Adequate for the low
 * degrees of plant models; repeated roots converge more slowly but still to ~1e-6, which is
 * plenty for choosing simulation horizons and frequency ranges.
 */
export function findPolynomialRoots(coefficients: readonly number[]): Complex[] {
  const p = trimPolynomial(coefficients);
  const n = p.length - 1;
  if (n < 1) return [];
  const monic = p.map((c) => c / p[0]);
  // Start on a circle sized by the coefficients (Cauchy bound), off the real axis.
  let bound = 0;
  for (let i = 1; i <= n; i++) bound = Math.max(bound, Math.abs(monic[i]));
  const radius = 1 + bound;
  const roots: Complex[] = [];
  for (let k = 0; k < n; k++) {
    const angle = (2 * Math.PI * k) / n + 0.4;
    roots.push({ re: radius * Math.cos(angle), im: radius * Math.sin(angle) });
  }
  for (let iteration = 0; iteration < 2000; iteration++) {
    let change = 0;
    for (let k = 0; k < n; k++) {
      const value = evaluatePolynomialComplex(monic, roots[k].re, roots[k].im);
      let denominator: Complex = { re: 1, im: 0 };
      for (let j = 0; j < n; j++) {
        if (j === k) continue;
        denominator = complexMultiply(denominator, { re: roots[k].re - roots[j].re, im: roots[k].im - roots[j].im });
      }
      if (denominator.re === 0 && denominator.im === 0) denominator = { re: 1e-12, im: 1e-12 };
      const delta = complexDivide(value, denominator);
      roots[k] = { re: roots[k].re - delta.re, im: roots[k].im - delta.im };
      change = Math.max(change, complexAbs(delta));
    }
    if (change < 1e-14 * radius) break;
  }
  // Snap numerically-real roots to the axis.
  return roots.map((r) => (Math.abs(r.im) < 1e-9 * Math.max(1, Math.abs(r.re)) ? { re: r.re, im: 0 } : r));
}
