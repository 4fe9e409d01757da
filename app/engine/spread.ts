/**
 * Tests of constant residual spread: the studentized Breusch–Pagan test (Breusch and Pagan 1979;
 * Koenker 1981) and the Brown–Forsythe test (Brown and Forsythe 1974: Levene's test on absolute
 * deviations from the group medians).
 */
import { chiSquareUpper, fUpper } from "./distributions";
import { residualSumOfSquares } from "./least-squares";
import { thinQtVector } from "./qr";

export interface BreuschPaganTest {
  readonly statistic: number | null;
  readonly df: number | null;
  readonly p: number | null;
  readonly reason?: string;
}

export interface FTest {
  readonly statistic: number | null;
  readonly df1: number | null;
  readonly df2: number | null;
  readonly p: number | null;
  readonly reason?: string;
}

/**
 * Koenker's studentized Breusch–Pagan statistic n·R² of the regression of ẽ² on the model's
 * regressors Z (column-major n×k, with its intercept), ẽ = √w·e; df = rank(Z) − 1.
 */
export function breuschPagan(
  residuals: ArrayLike<number>,
  z: Float64Array,
  n: number,
  k: number,
): BreuschPaganTest {
  return koenker(residuals, n, k, (u, total) => {
    const { rss, rank } = residualSumOfSquares({ x: z, n, p: k, y: u });
    return { explained: total - rss, rank };
  });
}

/**
 * The same statistic when an orthonormal basis of the regressors' column space is at hand (the
 * thin Q of an unweighted fit's design, n×rank column-major): the explained sum of squares is
 * ‖Q'u‖², so no second factorization of the design is made.
 */
export function breuschPaganOnBasis(
  residuals: ArrayLike<number>,
  q: Float64Array,
  n: number,
  rank: number,
): BreuschPaganTest {
  return koenker(residuals, n, rank, (u) => {
    const c = thinQtVector(q, n, rank, u);
    let explained = 0;
    for (let j = 0; j < rank; j++) explained += c[j] * c[j];
    return { explained, rank };
  });
}

function koenker(
  residuals: ArrayLike<number>,
  n: number,
  k: number,
  /** The explained sum of squares of the regression of the centred u on the regressors, and their rank. */
  regress: (u: Float64Array, total: number) => { explained: number; rank: number },
): BreuschPaganTest {
  if (k < 2) {
    return { statistic: null, df: null, p: null, reason: "the model has no regressor besides the intercept" };
  }
  const u = new Float64Array(n);
  let mean = 0;
  for (let i = 0; i < n; i++) {
    u[i] = residuals[i] * residuals[i];
    mean += u[i];
  }
  mean /= n;
  let total = 0;
  for (let i = 0; i < n; i++) {
    u[i] -= mean;
    total += u[i] * u[i];
  }
  if (!(total > 0))
    return { statistic: null, df: null, p: null, reason: "the squared residuals do not vary" };
  const { explained, rank } = regress(u, total);
  const statistic = (n * explained) / total;
  const df = rank - 1;
  return { statistic, df, p: chiSquareUpper(statistic, df) };
}

function median(values: number[]): number {
  // a typed copy sorts numerically without a comparator call per pair (same order for numbers)
  const s = Float64Array.from(values).sort();
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/**
 * Brown–Forsythe test: one-way analysis of variance of |ẽᵢ − median of its group|, F on
 * (k − 1, N − k) degrees of freedom.
 */
export function brownForsythe(residuals: ArrayLike<number>, groups: Int32Array, groupCount: number): FTest {
  const byGroup: number[][] = Array.from({ length: groupCount }, () => []);
  for (let i = 0; i < groups.length; i++) byGroup[groups[i]].push(residuals[i]);
  const present = byGroup.filter((g) => g.length > 0);
  const k = present.length;
  const total = groups.length;
  if (k < 2)
    return { statistic: null, df1: null, df2: null, p: null, reason: "fewer than two treatment arms" };
  if (total - k < 1)
    return { statistic: null, df1: null, df2: null, p: null, reason: "no arm has two or more rows" };
  const deviations = present.map((g) => {
    const m = median(g);
    return g.map((v) => Math.abs(v - m));
  });
  const groupMeans = deviations.map((d) => d.reduce((s, v) => s + v, 0) / d.length);
  const grand = deviations.flat().reduce((s, v) => s + v, 0) / total;
  let between = 0;
  let within = 0;
  deviations.forEach((d, g) => {
    between += d.length * (groupMeans[g] - grand) ** 2;
    for (const v of d) within += (v - groupMeans[g]) ** 2;
  });
  const df1 = k - 1;
  const df2 = total - k;
  const statistic = between / df1 / (within / df2);
  return { statistic, df1, df2, p: fUpper(statistic, df1, df2) };
}
