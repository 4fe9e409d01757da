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

export const REPEATED_DF_WORDS: Record<RepeatedDf, string> = {
  satterthwaite: "Satterthwaite",
  "kenward-roger": "Kenward–Roger",
  residual: "Residual (records less coefficients)",
};

export const REPEATED_METHOD_WORDS: Record<RepeatedMethod, string> = {
  reml: "Restricted maximum likelihood (REML)",
  ml: "Maximum likelihood (ML)",
};

/** The structures in the order the plan editor offers them (the specification's order). */
export const COVARIANCE_STRUCTURES = Object.keys(COVARIANCE_STRUCTURE_WORDS) as CovarianceStructureName[];
