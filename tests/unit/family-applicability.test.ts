/**
 * One rule says which checks and sensitivity analyses apply to a model family
 * (app/engine/family-applicability.ts): the plan's validation stores only those, the rerun
 * evaluates only those, and a generalized linear model may plan robust (sandwich) errors,
 * whose rerun reads the coefficients with R's sandwich::vcovHC(type = "HC3") standard errors
 * (tests/reference/values/glm-birthwt-logit.json, written by tests/reference/generate.R).
 */
import { readFileSync } from "node:fs";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
const { readPlannedModelForm, validatePlannedModel } = await import("~/.server/plans/planned-model");
const { computeRerun } = await import("~/.server/reruns/reruns.server");
const { CHECKS, defaultChecks } = await import("~/engine/checks");
const { checkApplies, sensitivityApplies, SENSITIVITY_KINDS } = await import("~/engine/family-applicability");
const { readCsvText } = await import("~/engine-io/read-csv");

let catalogue: {
  name: string;
  columns: Awaited<ReturnType<typeof listLockedVersions>>[number]["columns"];
}[] = [];

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  catalogue = (await listLockedVersions(seeded.studyId)).map((v) => ({
    name: v.datasetName,
    columns: v.columns,
  }));
});

const def = (key: string) => CHECKS.find((c) => c.key === key)!;

/** A responder model of the demo dataset with every check of the catalogue ticked, as a crafted post could. */
function responderForm(sensitivity: string[]): FormData {
  const f = new FormData();
  for (const [k, v] of Object.entries({
    key: "responder",
    title: "Responders at week 12",
    datasetName: "adeff",
    response: "resp",
    family: "binomial",
    treatment: "arm",
    treatmentReference: "Placebo",
    id: "subjid",
  }))
    f.set(k, v);
  for (const c of ["base", "stratum"]) f.append("covariate", c);
  for (const c of CHECKS) f.set(`check:${c.key}:enabled`, "on");
  for (const s of sensitivity) f.set(`sensitivity:${s}`, "on");
  return f;
}

describe("the family-applicability rule", () => {
  it("offers overdispersion for counts only, not for a 0/1 response", () => {
    expect(checkApplies(def("overdispersion"), "poisson")).toBe(true);
    expect(checkApplies(def("overdispersion"), "negative-binomial")).toBe(true);
    expect(checkApplies(def("overdispersion"), "binomial")).toBe(false);
    expect(checkApplies(def("overdispersion"), "gaussian")).toBe(false);
    expect(checkApplies(def("events_per_variable"), "binomial")).toBe(true);
    expect(checkApplies(def("shapiro_wilk"), "binomial")).toBe(false);
    expect(checkApplies(def("dfbetas_treatment"), "gaussian", false)).toBe(false);
    expect(defaultChecks(true, "binomial").map((c) => c.key)).not.toContain("overdispersion");
    expect(defaultChecks(true, "poisson").map((c) => c.key)).toContain("overdispersion");
  });

  it("offers robust (sandwich) errors for linear and generalized linear models, the variance function for linear ones only", () => {
    for (const f of ["gaussian", "binomial", "poisson"])
      expect(sensitivityApplies("robust_hc3", f)).toBe(true);
    expect(sensitivityApplies("robust_hc3", "cox")).toBe(false);
    expect(sensitivityApplies("variance_function", "binomial")).toBe(false);
    expect(sensitivityApplies("quasi_poisson", "binomial")).toBe(false);
    expect(SENSITIVITY_KINDS.filter((k) => sensitivityApplies(k, "cox"))).toEqual([
      "alternative_covariates",
      "cox_robust_subject",
      "cox_unstratified",
      "cox_rmst",
    ]);
  });
});

describe("the plan's validation", () => {
  it("accepts robust errors for a binomial model and stores only the checks that apply", () => {
    const v = validatePlannedModel(readPlannedModelForm(responderForm(["robust_hc3"])), catalogue, []);
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    const enabled = v.model.checks.filter((c) => c.enabled).map((c) => c.key);
    expect(enabled).not.toContain("overdispersion");
    expect(enabled).not.toContain("shapiro_wilk");
    expect(enabled).not.toContain("proportional_hazards");
    expect(enabled).toContain("events_per_variable");
    expect(v.model.sensitivity.map((s) => s.kind)).toEqual(["robust_hc3"]);
  });

  it("refuses, beside the field, an analysis that does not apply to the family", () => {
    const v = validatePlannedModel(
      readPlannedModelForm(responderForm(["variance_function", "quasi_poisson"])),
      catalogue,
      [],
    );
    expect(v.ok).toBe(false);
    if (v.ok) return;
    expect(v.errors["sensitivity:variance_function"]).toMatch(
      /applies to a linear model.*robust \(sandwich\) standard errors instead/,
    );
    expect(v.errors["sensitivity:quasi_poisson"]).toMatch(/Poisson model of counts/);
  });
});

describe("the rerun", () => {
  const R = JSON.parse(readFileSync("tests/reference/values/glm-birthwt-logit.json", "utf8")) as {
    robustSE: { HC3: number[] };
    coefficients: { estimate: number }[];
  };
  const spec = JSON.parse(readFileSync("tests/reference/models/glm-birthwt-logit.json", "utf8"));
  const cells = readCsvText(readFileSync("tests/reference/data/glm-birthwt-logit.csv", "utf8"));
  const table = {
    columns: cells.columns as Record<string, string[]>,
    rowNumbers: [...(cells.rowNumbers ?? cells.columns[Object.keys(cells.columns)[0]].map((_, i) => i + 1))],
  };
  const model = (checks: ReturnType<typeof defaultChecks>) => ({
    id: "m",
    position: 0,
    key: "birthwt",
    title: "Low birth weight",
    datasetName: "birthwt",
    population: null,
    spec,
    checks,
    sensitivity: [],
  });
  const meta = { datasetSha256: "0".repeat(64), planVersionId: "pv" };

  it("reads a logistic model with sandwich HC3 standard errors as sandwich::vcovHC does", () => {
    const doc = computeRerun(model(defaultChecks(true, "binomial")), table, { variant: "robust_hc3" }, meta);
    if (doc.result.kind !== "glm") throw new Error("expected a GLM");
    expect(doc.result.method.kind).toBe("robust");
    const z975 = 1.959963984540054; // qnorm(0.975), R 4.2
    doc.result.coefficients.forEach((c, j) => {
      expect(c.estimate).toBeCloseTo(R.coefficients[j].estimate, 6);
      expect(Math.abs(c.se / R.robustSE.HC3[j] - 1)).toBeLessThan(1e-6);
      expect(c.lower).toBeCloseTo(c.estimate - z975 * R.robustSE.HC3[j], 6);
      expect(c.statistic).toBeCloseTo(c.estimate / R.robustSE.HC3[j], 6);
    });
    const smoke = doc.result.ratios!.find((r) => r.name === doc.result.coefficients[1].name)!;
    expect(smoke.lower).toBeCloseTo(Math.exp(doc.result.coefficients[1].lower), 10);
    expect(doc.result.profileIntervals).toBeNull();
  });

  it("does not evaluate a check the family cannot have, even when an older plan ticked it", () => {
    const all = CHECKS.map((c) => ({
      key: c.key,
      enabled: true,
      threshold: c.defaultThreshold,
      remedy: c.defaultRemedy,
    }));
    const doc = computeRerun(model(all), table, { variant: "planned" }, meta);
    const keys = doc.checks.map((c) => c.key);
    expect(keys).not.toContain("overdispersion");
    expect(keys).toContain("events_per_variable");
    expect(doc.checks.every((c) => c.statistic !== "not computed" || c.key !== "overdispersion")).toBe(true);
  });
});
