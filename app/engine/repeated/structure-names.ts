/**
 * The covariance structures, the degrees-of-freedom methods and the likelihoods in words, for
 * pages, reports and the appendix (the specification keeps its keys: "toeplitz-heterogeneous").
 */
import type { CovarianceStructureName, RepeatedDf, RepeatedMethod } from "./repeated-spec";

export const STRUCTURE_WORDS: Record<CovarianceStructureName, string> = {
  unstructured: "Unstructured",
  toeplitz: "Toeplitz (one variance, a correlation per lag)",
  "toeplitz-heterogeneous": "Toeplitz with a variance per visit",
  ar1: "First-order autoregressive (one variance)",
  "ar1-heterogeneous": "First-order autoregressive with a variance per visit",
  "compound-symmetry": "Compound symmetry (one variance, one correlation)",
  "compound-symmetry-heterogeneous": "Compound symmetry with a variance per visit",
};

export const DF_METHOD_WORDS: Record<RepeatedDf, string> = {
  satterthwaite: "Satterthwaite",
  "kenward-roger": "Kenward–Roger",
  residual: "residual (records less coefficients)",
};

export const METHOD_WORDS: Record<RepeatedMethod, string> = {
  reml: "restricted maximum likelihood (REML)",
  ml: "maximum likelihood (ML)",
};
