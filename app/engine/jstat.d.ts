// Types for the parts of the jstat package the engine uses (the package ships none).
declare module "jstat" {
  interface JStatStatic {
    gammaln(x: number): number;
    ibeta(x: number, a: number, b: number): number;
    erfc(x: number): number;
    normal: {
      inv(p: number, mean: number, sd: number): number;
      cdf(x: number, mean: number, sd: number): number;
    };
    studentt: { inv(p: number, df: number): number; cdf(x: number, df: number): number };
    chisquare: { inv(p: number, df: number): number; cdf(x: number, df: number): number };
    centralF: { cdf(x: number, d1: number, d2: number): number };
  }
  const jStat: JStatStatic;
  export default jStat;
}
