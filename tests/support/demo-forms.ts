/** The plan editor's form for the demo study's primary model, as a biostatistician fills it in. */
export const ALL_LINEAR_CHECKS = [
  "cooks_distance",
  "leverage",
  "deletion_residual",
  "dfbetas_treatment",
  "dffits",
  "shapiro_wilk",
  "breusch_pagan",
  "brown_forsythe",
  "homogeneity_of_slopes",
  "reset",
  "gvif",
];

export function demoPrimaryForm(opts: { checks?: readonly string[]; sensitivity?: boolean } = {}): FormData {
  const f = new FormData();
  for (const [k, v] of Object.entries({
    key: "primary",
    title: "Primary efficacy: change from baseline at week 12",
    datasetName: "adeff",
    "population:0:column": "fasfl",
    "population:0:kind": "in",
    "population:0:value": "Y",
    response: "chg",
    family: "gaussian",
    treatment: "arm",
    treatmentReference: "Placebo",
    id: "subjid",
  }))
    f.set(k, v);
  for (const c of ["base", "stratum", "region", "sex", "age"]) f.append("covariate", c);
  for (const c of opts.checks ?? ALL_LINEAR_CHECKS) f.set(`check:${c}:enabled`, "on");
  if (opts.sensitivity ?? true) {
    f.set("sensitivity:robust_hc3", "on");
    f.set("sensitivity:exclude_influential", "on");
    f.set("sensitivity:variance_function", "on");
    f.set("sensitivity:varianceBy", "treatment");
  }
  return f;
}
