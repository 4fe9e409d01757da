/**
 * The checks a plan can commit to for a repeated-measures (MMRM) model, with their default
 * thresholds and where each default comes from. Evaluated on a rerun by repeated-checks.ts.
 * Normality and spread are judged on the normalized (Cholesky-scaled) residuals, which are
 * approximately independent standard normal when the model and its covariance hold.
 */
import type { CheckDefinition } from "../checks";

export const REPEATED_CHECKS: readonly CheckDefinition[] = [
  {
    key: "repeated_convergence",
    models: "repeated",
    label: "Covariance structure: converged as planned",
    rule: "finding when the fit did not converge, or when the structure used is not among the first k of the plan's list (the planned structure first, then its fallbacks; 1: only the planned structure is within plan)",
    defaultThreshold: 1,
    source: "the analysis as pre-specified (ICH E9, section 5.1); the fallback order is the SAP's own",
    defaultRemedy:
      "Report the structure used and why; compare the treatment contrast under the planned and the used structure",
    figure: null,
  },
  {
    key: "repeated_normality",
    models: "repeated",
    label: "Normality of normalized residuals (Shapiro–Wilk)",
    rule: "finding when the Shapiro–Wilk p-value of the normalized residuals is below k; read with the Q-Q plot, since large samples reject tiny departures",
    defaultThreshold: 0.05,
    source:
      "Shapiro–Wilk p < 0.05 (Shapiro and Wilk 1965) on the Cholesky-normalized residuals (Fitzmaurice, Laird and Ware 2011, on residual diagnostics)",
    defaultRemedy:
      "Judge the Q-Q plot; with a marked departure, a transformation of the response as a sensitivity analysis",
    figure: "repeated_qq",
  },
  {
    key: "repeated_spread",
    models: "repeated",
    label: "Equal spread of normalized residuals by visit and arm (Brown–Forsythe)",
    rule: "finding when the Brown–Forsythe test of equal spread of the normalized residuals across visit-by-arm cells has p below k",
    defaultThreshold: 0.05,
    source: "Brown–Forsythe p < 0.05 (Brown and Forsythe 1974) across the visit-by-arm cells",
    defaultRemedy:
      "Judge the residual plot by visit; consider a covariance structure with separate variances per arm as a sensitivity analysis",
    figure: "repeated_residuals_fitted",
  },
  {
    key: "repeated_influence",
    models: "repeated",
    label: "Influential subjects (Cook's distance of a subject's records)",
    rule: "finding when any subject's Cook's distance, computed on all of its records together, exceeds k/m (m subjects)",
    defaultThreshold: 4,
    source:
      "subject-level Cook's distance (Christensen, Pearson and Johnson 1992) with the 4/n rule of thumb taken per subject (Bollen and Jackman 1990)",
    defaultRemedy:
      "Review the flagged subjects; sensitivity analysis excluding their records, with the change in the primary contrast",
    figure: "repeated_influence",
  },
  {
    key: "repeated_primary_visit",
    models: "repeated",
    label: "Subjects contributing at the primary visit",
    rule: "finding when, in any arm, fewer than the share k of the analysed subjects have a record at the primary visit",
    defaultThreshold: 0.8,
    source:
      "the 5-and-20 rule: more than 20% lost to an analysis threatens its validity (Schulz and Grimes 2002)",
    defaultRemedy:
      "Describe the dropout by arm and visit; a sensitivity analysis under a missing-not-at-random assumption",
    figure: "repeated_means",
  },
];
