/**
 * Multiplicity adjustment of a family of p-values (the treatment contrasts): Bonferroni; Holm's
 * step-down (Holm 1979, Scand J Statist 6, 65–70); Hochberg's step-up (Hochberg 1988,
 * Biometrika 75, 800–802). Adjusted values are capped at one and keep the order of the raw ones,
 * as R's p.adjust gives them.
 */
import { z } from "zod";

export const multiplicitySchema = z.enum(["none", "bonferroni", "holm", "hochberg"]);
export type Multiplicity = z.infer<typeof multiplicitySchema>;

export const MULTIPLICITY_NAMES: Record<Multiplicity, string> = {
  none: "no adjustment",
  bonferroni: "Bonferroni",
  holm: "Holm (step-down)",
  hochberg: "Hochberg (step-up)",
};

/** The contrast sets in words. */
export const CONTRAST_SET_NAMES = {
  reference: "each arm against the reference arm",
  pairwise: "every pair of arms",
} as const;
/** The adjusted-means weightings in words. */
export const MEANS_WEIGHTING_NAMES = {
  equal: "other categorical factors averaged with equal weight over their levels",
  proportional: "other categorical factors averaged in proportion to their observed frequencies",
} as const;

/** Adjusted p-values in the order given; NaN stays NaN and is not counted in the family. */
export function adjustPValues(p: readonly number[], method: Multiplicity): number[] {
  const idx = p.map((_, i) => i).filter((i) => Number.isFinite(p[i]));
  const m = idx.length;
  const out = p.map(() => Number.NaN);
  if (method === "none") return [...p];
  if (method === "bonferroni") {
    for (const i of idx) out[i] = Math.min(1, p[i] * m);
    return out;
  }
  const ascending = [...idx].sort((a, b) => p[a] - p[b] || a - b);
  if (method === "holm") {
    let running = 0;
    ascending.forEach((i, k) => {
      running = Math.max(running, (m - k) * p[i]);
      out[i] = Math.min(1, running);
    });
    return out;
  }
  let running = 1;
  for (let k = m - 1; k >= 0; k--) {
    const i = ascending[k];
    running = Math.min(running, (m - k) * p[i]);
    out[i] = Math.min(1, running);
  }
  return out;
}
