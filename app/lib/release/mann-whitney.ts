// One-sided Mann–Whitney U test: is the first sample stochastically larger than the second?
// Exact null distribution (no ties) for small samples, the normal approximation with tie and
// continuity correction otherwise. Sources: REFERENCES.md in this folder.

export type MannWhitneyResult = {
  /** U of the first sample: pairs (x, y) with x > y, ties counted one half. */
  u: number;
  /** One-sided p-value for "first > second". */
  p: number;
  method: "exact" | "normal";
};

/** Both samples at most this size and no ties: the exact distribution is used. */
export const EXACT_MAX_SIZE = 20;

/** Average ranks (1-based) of `values`, ties sharing the mean of their ranks; also Σ(t³ − t) over tie groups. */
function rankWithTies(values: number[]): { ranks: number[]; tieSum: number } {
  const order = values.map((v, i) => [v, i] as const).sort((a, b) => a[0] - b[0]);
  const ranks = new Array<number>(values.length);
  let tieSum = 0;
  for (let i = 0; i < order.length; ) {
    let j = i;
    while (j + 1 < order.length && order[j + 1][0] === order[i][0]) j++;
    const t = j - i + 1;
    const rank = (i + j) / 2 + 1;
    for (let k = i; k <= j; k++) ranks[order[k][1]] = rank;
    if (t > 1) tieSum += t ** 3 - t;
    i = j + 1;
  }
  return { ranks, tieSum };
}

/**
 * Number of ways to get each U for sizes m, n under H0 (all orderings equally likely), by the
 * recurrence f(u; m, n) = f(u − n; m − 1, n) + f(u; m, n − 1) (Mann & Whitney 1947).
 */
function exactCounts(m: number, n: number): number[] {
  // table[i][j] = counts for sizes (i, j), built up row by row.
  const table: number[][][] = [];
  for (let i = 0; i <= m; i++) {
    table.push([]);
    for (let j = 0; j <= n; j++) {
      if (i === 0 || j === 0) {
        table[i].push([1]);
        continue;
      }
      const size = i * j + 1;
      const counts = new Array<number>(size).fill(0);
      const a = table[i - 1][j]; // last of the combined order is from sample 1: it beats all j
      const b = table[i][j - 1]; // last is from sample 2: it beats none
      for (let u = 0; u < a.length; u++) counts[u + j] += a[u];
      for (let u = 0; u < b.length; u++) counts[u] += b[u];
      table[i].push(counts);
    }
  }
  return table[m][n];
}

/** Standard normal upper tail Q(z) = 1 − Φ(z) (Abramowitz & Stegun 7.1.26 via erfc; |error| < 1.5e-7). */
export function normalUpperTail(z: number): number {
  const x = Math.abs(z) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * x);
  const erfc = t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429)))) * Math.exp(-x * x);
  return z >= 0 ? erfc / 2 : 1 - erfc / 2;
}

export function mannWhitneyGreater(first: number[], second: number[], options: { method?: "exact" | "normal" } = {}): MannWhitneyResult {
  const m = first.length;
  const n = second.length;
  if (m === 0 || n === 0) throw new RangeError("Mann–Whitney needs at least one value in each sample");
  if (![...first, ...second].every(Number.isFinite)) throw new RangeError("Mann–Whitney needs finite values");
  const { ranks, tieSum } = rankWithTies([...first, ...second]);
  const r1 = ranks.slice(0, m).reduce((s, r) => s + r, 0);
  const u = r1 - (m * (m + 1)) / 2;
  const exact = options.method ? options.method === "exact" : m <= EXACT_MAX_SIZE && n <= EXACT_MAX_SIZE;
  if (exact && tieSum === 0) {
    const counts = exactCounts(m, n);
    const total = counts.reduce((s, c) => s + c, 0);
    let upper = 0;
    for (let k = Math.ceil(u); k < counts.length; k++) upper += counts[k];
    return { u, p: upper / total, method: "exact" };
  }
  const big = m + n;
  const mean = (m * n) / 2;
  const variance = ((m * n) / 12) * (big + 1 - tieSum / (big * (big - 1)));
  if (variance <= 0) return { u, p: 1, method: "normal" };
  // Continuity correction of one half towards the mean.
  const z = (u - mean - 0.5) / Math.sqrt(variance);
  return { u, p: normalUpperTail(z), method: "normal" };
}
