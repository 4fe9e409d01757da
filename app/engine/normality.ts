/**
 * Tests of normality of the residuals: Shapiro–Wilk (Royston 1995, algorithm AS R94),
 * Anderson–Darling (Stephens 1974; small-sample modification and p-value approximation from
 * D'Agostino and Stephens 1986, Goodness-of-Fit Techniques, table 4.9), Kolmogorov–Smirnov with
 * the Lilliefors correction (Lilliefors 1967; p-value by Dallal and Wilkinson 1986, and Stephens
 * 1974's modified statistic above p = 0.1).
 */
import { normalQuantile, normalUpper } from "./distributions";
import { sortNumbers } from "./sort-numbers";

export interface NormalityTest {
  readonly statistic: number | null;
  readonly p: number | null;
  /** Why the test was not computed. */
  readonly reason?: string;
}

export interface AndersonDarlingTest extends NormalityTest {
  /** A² × (1 + 0.75/n + 2.25/n²), the statistic the p-value is read from. */
  readonly modifiedStatistic: number | null;
}

function notComputed(reason: string): NormalityTest {
  return { statistic: null, p: null, reason };
}

function sorted(values: ArrayLike<number>): Float64Array {
  return sortNumbers(Float64Array.from(values));
}

/**
 * The residuals sorted once for the three tests, with their mean and SD, and Φ(z) and Φ(−z) of
 * each standardized value from one evaluation of the normal tail (normalUpper(t) for t < 0 is
 * 1 − normalUpper(−t), so both come out with the bits two separate calls give). Anderson–Darling
 * and Lilliefors read the same values.
 */
class SortedSample {
  readonly x: Float64Array;
  private moments?: { mean: number; sd: number };
  private tails?: { lower: Float64Array; upper: Float64Array };
  constructor(values: ArrayLike<number>) {
    this.x = sorted(values);
  }
  get meanSd(): { mean: number; sd: number } {
    return (this.moments ??= meanSd(this.x));
  }
  /** Φ(zᵢ) and Φ(−zᵢ) for zᵢ = (xᵢ − mean)/sd. */
  get normalTails(): { lower: Float64Array; upper: Float64Array } {
    if (this.tails) return this.tails;
    const { mean, sd } = this.meanSd;
    const n = this.x.length;
    const lower = new Float64Array(n);
    const upper = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const z = (this.x[i] - mean) / sd;
      const g = normalUpper(Math.abs(z));
      lower[i] = z > 0 ? 1 - g : g;
      upper[i] = z < 0 ? 1 - g : g;
    }
    return (this.tails = { lower, upper });
  }
}

/** Shapiro–Wilk, Anderson–Darling and Lilliefors on the same residuals, sorting them once. */
export function normalityTests(values: ArrayLike<number>): {
  shapiroWilk: NormalityTest;
  andersonDarling: AndersonDarlingTest;
  lilliefors: NormalityTest;
} {
  let sample: SortedSample | undefined;
  const shared = () => (sample ??= new SortedSample(values));
  return {
    shapiroWilk: shapiroWilkOf(values.length, shared),
    andersonDarling: andersonDarlingOf(values.length, shared),
    lilliefors: lillieforsOf(values.length, shared),
  };
}

function meanSd(x: Float64Array): { mean: number; sd: number } {
  const n = x.length;
  let s = 0;
  for (let i = 0; i < n; i++) s += x[i];
  const mean = s / n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (x[i] - mean) * (x[i] - mean);
  return { mean, sd: Math.sqrt(ss / (n - 1)) };
}

/** Horner evaluation of c[0] + c[1] x + … */
function poly(c: readonly number[], x: number): number {
  let r = 0;
  for (let i = c.length - 1; i >= 0; i--) r = r * x + c[i];
  return r;
}

// Coefficients of AS R94 (Royston 1995, Applied Statistics 44, 547–551)
const C1 = [0, 0.221157, -0.147981, -2.07119, 4.434685, -2.706056];
const C2 = [0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633];
const C3 = [0.544, -0.39978, 0.025054, -6.714e-4];
const C4 = [1.3822, -0.77857, 0.062767, -0.0020322];
const C5 = [-1.5861, -0.31082, -0.083751, 0.0038915];
const C6 = [-0.4803, -0.082676, 0.0030302];
const G = [-2.273, 0.459];

/** Shapiro–Wilk W and p-value, AS R94, for 3 ≤ n ≤ 5000. */
export function shapiroWilk(values: ArrayLike<number>): NormalityTest {
  return shapiroWilkOf(values.length, () => new SortedSample(values));
}

function shapiroWilkOf(n: number, sample: () => SortedSample): NormalityTest {
  if (n < 3) return notComputed(`Shapiro–Wilk needs at least 3 residuals (there are ${n})`);
  if (n > 5000) return notComputed(`Shapiro–Wilk is defined for at most 5000 residuals (there are ${n})`);
  const x = sample().x;
  const range = x[n - 1] - x[0];
  if (range < 1e-10) return notComputed("the residuals are all equal");
  const half = Math.floor(n / 2);
  // a[i], i = 0..half-1: coefficients for the i-th largest order statistic (positive)
  const a = new Float64Array(half);
  if (n === 3) {
    a[0] = Math.SQRT1_2;
  } else {
    const m = new Float64Array(half);
    let summ2 = 0;
    for (let i = 0; i < half; i++) {
      m[i] = normalQuantile((i + 1 - 0.375) / (n + 0.25));
      summ2 += m[i] * m[i];
    }
    summ2 *= 2;
    const ssumm2 = Math.sqrt(summ2);
    const rsn = 1 / Math.sqrt(n);
    const a1 = poly(C1, rsn) - m[0] / ssumm2;
    let first: number;
    let fac: number;
    if (n > 5) {
      first = 2;
      const a2 = -m[1] / ssumm2 + poly(C2, rsn);
      fac = Math.sqrt((summ2 - 2 * m[0] * m[0] - 2 * m[1] * m[1]) / (1 - 2 * a1 * a1 - 2 * a2 * a2));
      a[1] = a2;
    } else {
      first = 1;
      fac = Math.sqrt((summ2 - 2 * m[0] * m[0]) / (1 - 2 * a1 * a1));
    }
    a[0] = a1;
    for (let i = first; i < half; i++) a[i] = -m[i] / fac;
  }
  // W as the squared correlation of the ordered data with the coefficients (AS R94)
  const coef = new Float64Array(n);
  for (let i = 0; i < half; i++) {
    coef[n - 1 - i] = a[i];
    coef[i] = -a[i];
  }
  let sa = 0;
  let sx = 0;
  for (let i = 0; i < n; i++) {
    sa += coef[i];
    sx += x[i] / range;
  }
  sa /= n;
  sx /= n;
  let ssa = 0;
  let ssx = 0;
  let sax = 0;
  for (let i = 0; i < n; i++) {
    const da = coef[i] - sa;
    const dx = x[i] / range - sx;
    ssa += da * da;
    ssx += dx * dx;
    sax += da * dx;
  }
  const root = Math.sqrt(ssa * ssx);
  const w1 = ((root - sax) * (root + sax)) / (ssa * ssx);
  const w = 1 - w1;
  if (n === 3) {
    const p = Math.max(0, (6 / Math.PI) * (Math.asin(Math.sqrt(w)) - Math.PI / 3));
    return { statistic: w, p };
  }
  let y = Math.log(w1);
  const lnN = Math.log(n);
  let mu: number;
  let sigma: number;
  if (n <= 11) {
    const gamma = poly(G, n);
    if (y >= gamma) return { statistic: w, p: 1e-99 };
    y = -Math.log(gamma - y);
    mu = poly(C3, n);
    sigma = Math.exp(poly(C4, n));
  } else {
    mu = poly(C5, lnN);
    sigma = Math.exp(poly(C6, lnN));
  }
  return { statistic: w, p: normalUpper((y - mu) / sigma) };
}

/** log Φ(z) given Φ(z), kept accurate far in the lower tail by the asymptotic series of Mills' ratio. */
function logNormalCdf(z: number, cdf: number): number {
  if (z > -30) return Math.log(cdf);
  const z2 = z * z;
  return -0.5 * z2 - Math.log(-z) - 0.5 * Math.log(2 * Math.PI) + Math.log(1 - 1 / z2 + 3 / (z2 * z2));
}

/** Anderson–Darling test of normality with estimated mean and variance, n ≥ 8. */
export function andersonDarling(values: ArrayLike<number>): AndersonDarlingTest {
  return andersonDarlingOf(values.length, () => new SortedSample(values));
}

function andersonDarlingOf(n: number, sample: () => SortedSample): AndersonDarlingTest {
  if (n < 8)
    return {
      ...notComputed(`Anderson–Darling needs at least 8 residuals (there are ${n})`),
      modifiedStatistic: null,
    };
  const shared = sample();
  const x = shared.x;
  const { mean, sd } = shared.meanSd;
  if (!(sd > 0)) return { ...notComputed("the residuals are all equal"), modifiedStatistic: null };
  const { lower, upper } = shared.normalTails;
  let s = 0;
  for (let i = 0; i < n; i++) {
    const zi = (x[i] - mean) / sd;
    const zj = (x[n - 1 - i] - mean) / sd;
    s += (2 * i + 1) * (logNormalCdf(zi, lower[i]) + logNormalCdf(-zj, upper[n - 1 - i]));
  }
  const a2 = -n - s / n;
  const aa = a2 * (1 + 0.75 / n + 2.25 / (n * n));
  let p: number;
  if (aa < 0.2) p = 1 - Math.exp(-13.436 + 101.14 * aa - 223.73 * aa * aa);
  else if (aa < 0.34) p = 1 - Math.exp(-8.318 + 42.796 * aa - 59.938 * aa * aa);
  else if (aa < 0.6) p = Math.exp(0.9177 - 4.279 * aa - 1.38 * aa * aa);
  else if (aa < 10) p = Math.exp(1.2937 - 5.709 * aa + 0.0186 * aa * aa);
  else p = 3.7e-24;
  return { statistic: a2, p, modifiedStatistic: aa };
}

/** Kolmogorov–Smirnov distance to the fitted normal with the Lilliefors p-value, n ≥ 5. */
export function lilliefors(values: ArrayLike<number>): NormalityTest {
  return lillieforsOf(values.length, () => new SortedSample(values));
}

function lillieforsOf(n: number, sample: () => SortedSample): NormalityTest {
  if (n < 5) return notComputed(`the Lilliefors test needs at least 5 residuals (there are ${n})`);
  const shared = sample();
  if (!(shared.meanSd.sd > 0)) return notComputed("the residuals are all equal");
  const lower = shared.normalTails.lower;
  let dPlus = -Infinity;
  let dMinus = -Infinity;
  for (let i = 0; i < n; i++) {
    const f = lower[i];
    dPlus = Math.max(dPlus, (i + 1) / n - f);
    dMinus = Math.max(dMinus, f - i / n);
  }
  const k = Math.max(dPlus, dMinus);
  const kd = n <= 100 ? k : k * Math.pow(n / 100, 0.49);
  const nd = n <= 100 ? n : 100;
  let p = Math.exp(
    -7.01256 * kd * kd * (nd + 2.78019) +
      2.99587 * kd * Math.sqrt(nd + 2.78019) -
      0.122119 +
      0.974598 / Math.sqrt(nd) +
      1.67997 / nd,
  );
  if (p > 0.1) {
    const kk = (Math.sqrt(n) - 0.01 + 0.85 / Math.sqrt(n)) * k;
    if (kk <= 0.302) p = 1;
    else if (kk <= 0.5)
      p = 2.76773 - 19.828315 * kk + 80.709644 * kk ** 2 - 138.55152 * kk ** 3 + 81.218052 * kk ** 4;
    else if (kk <= 0.9)
      p = -4.901232 + 40.662806 * kk - 97.490286 * kk ** 2 + 94.029866 * kk ** 3 - 32.355711 * kk ** 4;
    else if (kk <= 1.31)
      p = 6.198765 - 19.558097 * kk + 23.186922 * kk ** 2 - 12.234627 * kk ** 3 + 2.423045 * kk ** 4;
    else p = 0;
  }
  return { statistic: k, p };
}
