/**
 * A repeated-measures model's choices in words, as a plan, a page or a methods section states
 * them: the covariance structures of the visits within a subject, the degrees-of-freedom method
 * and the likelihood. The specification keeps its keys (`ar1-heterogeneous`, `kenward-roger`).
 * Type-only imports, so the plan editor can read it without the engine's numerics.
 */
import type { CovarianceStructureName, RepeatedDf, RepeatedMethod } from "./repeated-spec";

/** In running text (lower case but for names); `sentenceCase` starts a label or sentence with one. */
export const COVARIANCE_STRUCTURE_WORDS: Record<CovarianceStructureName, string> = {
  unstructured: "unstructured",
  toeplitz: "Toeplitz",
  "toeplitz-heterogeneous": "heterogeneous Toeplitz",
  ar1: "AR(1)",
  "ar1-heterogeneous": "heterogeneous AR(1)",
  "compound-symmetry": "compound symmetry",
  "compound-symmetry-heterogeneous": "heterogeneous compound symmetry",
};

export const sentenceCase = (words: string): string => words.charAt(0).toUpperCase() + words.slice(1);

/** A structure described for a results page or report: what it assumes of variances and correlations. */
export const COVARIANCE_STRUCTURE_DESCRIPTIONS: Record<CovarianceStructureName, string> = {
  unstructured: "Unstructured",
  toeplitz: "Toeplitz (one variance, a correlation per lag)",
  "toeplitz-heterogeneous": "Toeplitz with a variance per visit",
  ar1: "First-order autoregressive (one variance)",
  "ar1-heterogeneous": "First-order autoregressive with a variance per visit",
  "compound-symmetry": "Compound symmetry (one variance, one correlation)",
  "compound-symmetry-heterogeneous": "Compound symmetry with a variance per visit",
};

/** In running text; `sentenceCase` for a label. */
export const REPEATED_DF_WORDS: Record<RepeatedDf, string> = {
  satterthwaite: "Satterthwaite",
  "kenward-roger": "Kenward–Roger",
  residual: "residual (records less coefficients)",
};

/** In running text; `sentenceCase` for a label. */
export const REPEATED_METHOD_WORDS: Record<RepeatedMethod, string> = {
  reml: "restricted maximum likelihood (REML)",
  ml: "maximum likelihood (ML)",
};

/** The structures in the order the plan editor offers them (the specification's order). */
export const COVARIANCE_STRUCTURES = Object.keys(COVARIANCE_STRUCTURE_WORDS) as CovarianceStructureName[];
