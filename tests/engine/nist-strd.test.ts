// Accuracy on the NIST Statistical Reference Datasets for linear least squares
// (NIST/ITL StRD, https://www.itl.nist.gov/div898/strd/lls/lls.shtml).
// Longley (Longley 1967, JASA 62, 819–841): data and certified values typed in from the NIST file
// Longley.dat. Wampler1 and Wampler2 (Wampler 1970, J. Res. NBS 74B, 79–89): exact fifth-degree
// polynomials in x = 0..20, generated here; certified coefficients are the polynomial's, with
// standard deviations and residual SD exactly 0.
// The figure of merit is the log relative error LRE = −log10(|est − cert| / |cert|)
// (−log10 |est| when the certified value is 0), capped at 15.
import { describe, expect, it } from "vitest";
import { fitLinear as fitModel } from "~/engine";

const LONGLEY = [
  // y, x1 (GNP deflator), x2 (GNP), x3 (unemployed), x4 (armed forces), x5 (population), x6 (year)
  [60323, 83.0, 234289, 2356, 1590, 107608, 1947],
  [61122, 88.5, 259426, 2325, 1456, 108632, 1948],
  [60171, 88.2, 258054, 3682, 1616, 109773, 1949],
  [61187, 89.5, 284599, 3351, 1650, 110929, 1950],
  [63221, 96.2, 328975, 2099, 3099, 112075, 1951],
  [63639, 98.1, 346999, 1932, 3594, 113270, 1952],
  [64989, 99.0, 365385, 1870, 3547, 115094, 1953],
  [63761, 100.0, 363112, 3578, 3350, 116219, 1954],
  [66019, 101.2, 397469, 2904, 3048, 117388, 1955],
  [67857, 104.6, 419180, 2822, 2857, 118734, 1956],
  [68169, 108.4, 442769, 2936, 2798, 120445, 1957],
  [66513, 110.8, 444546, 4681, 2637, 121950, 1958],
  [68655, 112.6, 482704, 3813, 2552, 123366, 1959],
  [69564, 114.2, 502601, 3931, 2514, 125368, 1960],
  [69331, 115.7, 518173, 4806, 2572, 127852, 1961],
  [70551, 116.9, 554894, 4007, 2827, 130081, 1962],
];

// Certified values, NIST StRD Longley.dat
const LONGLEY_CERTIFIED = {
  estimate: [
    -3482258.63459582, 15.0618722713733, -0.35819179292591e-1, -2.02022980381683, -1.03322686717359,
    -0.511041056535807e-1, 1829.15146461355,
  ],
  se: [
    890420.383607373, 84.9149257747669, 0.334910077722432e-1, 0.488399681651699, 0.214274163161675,
    0.22607320006937, 455.478499142212,
  ],
  sigma: 304.854073561965,
  rSquared: 0.995479004577296,
};

function lre(estimate: number, certified: number): number {
  const err = certified === 0 ? Math.abs(estimate) : Math.abs(estimate - certified) / Math.abs(certified);
  return err === 0 ? 15 : Math.min(15, -Math.log10(err));
}

function polynomialCase(decimals: number) {
  // y = Σ_k (10^-decimals)^k x^k for k = 0..5, written as exact decimal text (as in the NIST files)
  const columns: Record<string, string[]> = { y: [], x1: [], x2: [], x3: [], x4: [], x5: [] };
  for (let x = 0; x <= 20; x++) {
    let scaled = 0n;
    const unit = 10n ** BigInt(5 * decimals);
    for (let k = 0; k <= 5; k++) scaled += BigInt(x) ** BigInt(k) * 10n ** BigInt((5 - k) * decimals);
    const whole = scaled / unit;
    const frac = (scaled % unit).toString().padStart(5 * decimals, "0");
    columns.y.push(decimals === 0 ? whole.toString() : `${whole}.${frac}`);
    for (let k = 1; k <= 5; k++) columns[`x${k}`].push((BigInt(x) ** BigInt(k)).toString());
  }
  const spec = { response: "y", terms: [1, 2, 3, 4, 5].map((k) => ({ variable: `x${k}` })) };
  const certified = [0, 1, 2, 3, 4, 5].map((k) => Math.pow(10, -decimals * k));
  return { result: fitModel(spec, { columns }), certified };
}

const figures: string[] = [];

describe("NIST StRD linear least squares", () => {
  it("Longley: every coefficient and standard error to at least 10 digits", () => {
    const names = ["y", "x1", "x2", "x3", "x4", "x5", "x6"];
    const columns = Object.fromEntries(names.map((n, j) => [n, LONGLEY.map((r) => String(r[j]))]));
    const result = fitModel(
      { response: "y", terms: names.slice(1).map((variable) => ({ variable })) },
      { columns },
    );
    const est = result.coefficients.map((c, j) => lre(c.estimate, LONGLEY_CERTIFIED.estimate[j]));
    const se = result.coefficients.map((c, j) => lre(c.se, LONGLEY_CERTIFIED.se[j]));
    figures.push(
      `Longley   min LRE estimates ${Math.min(...est).toFixed(1)}, standard errors ${Math.min(...se).toFixed(1)}, residual SD ${lre(result.fit.sigma, LONGLEY_CERTIFIED.sigma).toFixed(1)}, R² ${lre(result.fit.rSquared, LONGLEY_CERTIFIED.rSquared).toFixed(1)}`,
    );
    for (const v of [...est, ...se]) expect(v).toBeGreaterThanOrEqual(10);
    expect(lre(result.fit.sigma, LONGLEY_CERTIFIED.sigma)).toBeGreaterThanOrEqual(10);
    expect(lre(result.fit.rSquared, LONGLEY_CERTIFIED.rSquared)).toBeGreaterThanOrEqual(10);
  });

  it("Wampler1 (y = 1 + x + … + x⁵): at least 8 digits", () => {
    const { result, certified } = polynomialCase(0);
    const est = result.coefficients.map((c, j) => lre(c.estimate, certified[j]));
    const se = result.coefficients.map((c) => lre(c.se, 0));
    figures.push(
      `Wampler1  min LRE estimates ${Math.min(...est).toFixed(1)}, standard errors ${Math.min(...se).toFixed(1)} (certified 0)`,
    );
    for (const v of [...est, ...se]) expect(v).toBeGreaterThanOrEqual(8);
  });

  it("Wampler2 (y = 1 + 0.1x + … + 0.00001x⁵): at least 10 digits", () => {
    const { result, certified } = polynomialCase(1);
    const est = result.coefficients.map((c, j) => lre(c.estimate, certified[j]));
    const se = result.coefficients.map((c) => lre(c.se, 0));
    figures.push(
      `Wampler2  min LRE estimates ${Math.min(...est).toFixed(1)}, standard errors ${Math.min(...se).toFixed(1)} (certified 0)`,
    );
    for (const v of [...est, ...se]) expect(v).toBeGreaterThanOrEqual(10);
    console.info(figures.join("\n"));
  });
});
