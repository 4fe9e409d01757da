/**
 * The covariance structures of the visits in words, for check texts and rerun labels; the
 * specification keeps its keys (`"compound-symmetry"`). Method names as the literature gives them.
 */
import type { CovarianceStructureName } from "./repeated-spec";

export const STRUCTURE_WORDS: Record<CovarianceStructureName, string> = {
  unstructured: "unstructured",
  toeplitz: "Toeplitz",
  "toeplitz-heterogeneous": "heterogeneous Toeplitz",
  ar1: "first-order autoregressive",
  "ar1-heterogeneous": "heterogeneous first-order autoregressive",
  "compound-symmetry": "compound symmetry",
  "compound-symmetry-heterogeneous": "heterogeneous compound symmetry",
};
