/**
 * Profile-likelihood confidence intervals (Venzon and Moolgavkar 1988): for each coefficient the
 * values t where the signed root of the scaled deviance increase,
 * sign(t − β̂)·√((D(t) − D̂)/φ), equals ±1.96, each D(t) from a refit with β_j fixed at t (the
 * fixed part moved into the offset). Roots by the Illinois variant of regula falsi.
 */
import type { Design, PreparedData } from "../design";
import { normalQuantile } from "../distributions";
import type { IrlsFit } from "./irls";

export interface ProfileInterval {
  readonly name: string;
  readonly lower: number | null;
  readonly upper: number | null;
}

export type DevianceOf = (offset: Float64Array, design: { x: Float64Array; p: number }) => number;

export function profileIntervals(
  design: Design,
  data: PreparedData,
  fit: IrlsFit,
  devianceOf: DevianceOf,
  coefficients: readonly { name: string; estimate: number; se: number }[],
  dispersion: number,
  _estimatedDispersion: boolean,
  _dfResidual: number,
): ProfileInterval[] | null {
  const { n, p } = design;
  if (p < 2) return null;
  const cutoff = normalQuantile(0.975);
  const base = data.offset ?? new Float64Array(n);
  return coefficients.map((c, j) => {
    const xMinus = new Float64Array(n * (p - 1));
    for (let k = 0, col = 0; k < p; k++) {
      if (k === j) continue;
      xMinus.set(design.x.subarray(k * n, (k + 1) * n), col * n);
      col++;
    }
    const xj = design.x.subarray(j * n, (j + 1) * n);
    const signedRoot = (t: number): number => {
      const off = new Float64Array(n);
      for (let i = 0; i < n; i++) off[i] = base[i] + t * xj[i];
      const d = devianceOf(off, { x: xMinus, p: p - 1 });
      const inc = Math.max(0, (d - fit.deviance) / dispersion);
      return Math.sign(t - c.estimate) * Math.sqrt(inc);
    };
    const bound = (direction: 1 | -1): number | null => {
      const target = direction * cutoff;
      const g = (t: number) => signedRoot(t) - target;
      let a = c.estimate;
      let ga = -target;
      let step = cutoff * c.se;
      let b = c.estimate + direction * step;
      let gb = g(b);
      for (let k = 0; k < 30 && Math.sign(gb) === Math.sign(ga); k++) {
        a = b;
        ga = gb;
        step *= 2;
        b = c.estimate + direction * step;
        gb = g(b);
      }
      if (Math.sign(gb) === Math.sign(ga) || !Number.isFinite(gb)) return null;
      let side = 0;
      for (let iter = 0; iter < 100; iter++) {
        const t = (a * gb - b * ga) / (gb - ga);
        const gt = g(t);
        if (Math.abs(gt) < 1e-10 || Math.abs(b - a) < 1e-12 * (1 + Math.abs(t))) return t;
        if (Math.sign(gt) === Math.sign(gb)) {
          b = t;
          gb = gt;
          if (side === -1) ga /= 2;
          side = -1;
        } else {
          a = t;
          ga = gt;
          if (side === 1) gb /= 2;
          side = 1;
        }
      }
      return (a + b) / 2;
    };
    return { name: c.name, lower: bound(-1), upper: bound(1) };
  });
}
