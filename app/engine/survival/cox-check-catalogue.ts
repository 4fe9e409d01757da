/**
 * The checks a plan can commit to for a time-to-event (Cox) model, with their default
 * thresholds and where each default comes from. Evaluated on a rerun by cox-checks.ts.
 */
import type { CheckDefinition } from "../checks";

export const COX_CHECKS: readonly CheckDefinition[] = [
  {
    key: "proportional_hazards",
    models: "cox",
    label: "Proportional hazards (Grambsch–Therneau)",
    rule: "finding when the global test or any term's test of proportional hazards has p below k; read with the scaled Schoenfeld residual plot, since large trials reject trivial departures",
    defaultThreshold: 0.05,
    source: "p < 0.05 with the scaled Schoenfeld residuals (Grambsch and Therneau 1994)",
    defaultRemedy:
      "Judge the scaled Schoenfeld plots; if the departure matters, a stratified or time-varying treatment effect as a sensitivity analysis",
    figure: "schoenfeld",
  },
  {
    key: "functional_form_cox",
    models: "cox",
    label: "Functional form of continuous covariates",
    rule: "finding when a likelihood-ratio test of an added squared term has p below k for any continuous covariate; read with the martingale residuals against the covariate",
    defaultThreshold: 0.05,
    source:
      "martingale residuals against the covariate with a smoother (Therneau, Grambsch and Fleming 1990); likelihood-ratio test of a quadratic term",
    defaultRemedy:
      "Inspect the martingale residual plot; consider a spline or transformation of the covariate",
    figure: "martingale_covariate",
  },
  {
    key: "dfbetas_treatment_cox",
    models: "cox",
    label: "Influence on the treatment log hazard ratio (DFBETAS)",
    rule: "finding when any subject's |DFBETAS| on a treatment coefficient exceeds k/√n",
    defaultThreshold: 2,
    source: "2/√n (Belsley, Kuh and Welsch 1980)",
    defaultRemedy: "Review the flagged subjects; sensitivity analysis excluding them",
    figure: "cox_influence",
    needsTreatment: true,
  },
  {
    key: "events_per_coefficient",
    models: "cox",
    label: "Events per coefficient",
    rule: "finding when there are fewer than k events per estimated coefficient",
    defaultThreshold: 10,
    source: "10 events per variable in proportional hazards regression (Peduzzi et al. 1995)",
    defaultRemedy: "Report the estimates with caution; consider a reduced covariate set",
    figure: "kaplan_meier",
  },
];
