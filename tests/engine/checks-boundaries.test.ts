// The rule book (app/engine/checks.ts, app/engine/survival/cox-check-catalogue.ts and
// cox-checks.ts, app/engine/repeated/repeated-check-catalogue.ts and repeated-checks.ts), one
// worked boundary case per check: the statistic exactly at the published
// threshold stays within plan (every rule is strict: "exceeds", "below", "fewer than"), and the
// next step past it is a finding. Each case names the threshold's published source (cited from
// memory, as the catalogue cites it). The cases start from real fits of invented data and set the
// one statistic a check reads, so the numbers sit exactly on the boundary. They assert outcomes,
// flagged subjects and threshold numbers, never the wording of the texts.
import { describe, expect, it } from "vitest";
import { fitModel, type GlmResult, type LinearModelResult } from "~/engine";
import {
  CHECK_BY_KEY,
  CHECKS,
  evaluateChecks,
  type CheckKey,
  type CheckOutcome,
  type PlannedCheck,
} from "~/engine/checks";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { readCsvText } from "~/engine-io/read-csv";
import { evaluateRepeatedChecks } from "~/engine/repeated/repeated-checks";
import { fitRepeatedModel, type RepeatedResult } from "~/engine/repeated/repeated-model";
import { evaluateCoxChecks } from "~/engine/survival/cox-checks";
import { fitCoxModel, type CoxResult } from "~/engine/survival/cox-model";
import type { FunctionalFormTest } from "~/engine/survival/functional-form";

const N = 64; // subjects: bounds such as 4/n, 2p/n, 2/√n and 2√(p/n) are exact binary fractions
const FLAGGED_ROW = 6; // the data row of the subject placed on the boundary (index 5)

/** An invented two-arm trial without randomness: every column is a formula of the row number. */
function inventedTrial() {
  const cols: Record<string, string[]> = {
    id: [],
    arm: [],
    base: [],
    age: [],
    y: [],
    events: [],
    time: [],
    status: [],
  };
  for (let i = 0; i < N; i++) {
    const arm = i % 2 === 0 ? "Placebo" : "Active";
    const base = 40 + ((i * 7) % 23);
    const age = 35 + ((i * 11) % 31);
    const wobble = Math.sin(i * 1.7) * 3;
    cols.id.push(`BND-${String(i + 1).padStart(3, "0")}`);
    cols.arm.push(arm);
    cols.base.push(String(base));
    cols.age.push(String(age));
    cols.y.push((10 + 0.4 * base - 0.05 * age - (arm === "Active" ? 2 : 0) + wobble).toFixed(3));
    cols.events.push(String(((i * 5) % 7) + (arm === "Active" ? 0 : 1)));
    cols.time.push(String(5 + ((i * 13) % 47)));
    cols.status.push(i % 3 === 0 ? "0" : "1");
  }
  return { columns: cols };
}

const table = inventedTrial();
const terms = [{ variable: "arm" }, { variable: "base" }, { variable: "age" }];

function fitLinear(): LinearModelResult {
  const r = fitModel({ response: "y", terms, treatment: "arm", id: "id" }, table);
  if (r.kind !== "linear") throw new Error("expected a linear model");
  return r;
}
function fitPoisson(): GlmResult {
  const r = fitModel({ response: "events", family: "poisson", terms, treatment: "arm", id: "id" }, table);
  if (r.kind !== "glm") throw new Error("expected a generalized linear model");
  return r;
}

const linear = fitLinear();
const poisson = fitPoisson();
const cox = fitCoxModel(
  {
    family: "cox",
    response: "time",
    status: { column: "status", event: ["1"] },
    terms: [{ variable: "arm" }, { variable: "age" }],
    treatment: "arm",
    id: "id",
  },
  table,
);

/** The plan's check at its catalogue default (or at the plan's own number). */
function planned(key: CheckKey, threshold = CHECK_BY_KEY.get(key)!.defaultThreshold): PlannedCheck {
  return { key, enabled: true, threshold, remedy: "" };
}

function only(outcomes: CheckOutcome[]): CheckOutcome {
  expect(outcomes).toHaveLength(1);
  return outcomes[0];
}

/** n values, all zero but the boundary subject's. */
function oneSubject(value: number, n = N): number[] {
  return Array.from({ length: n }, (_, i) => (i === FLAGGED_ROW - 1 ? value : 0));
}

function linearCheck(key: CheckKey, r: LinearModelResult, threshold?: number): CheckOutcome {
  return only(evaluateChecks(r, [planned(key, threshold)]));
}
function glmCheck(key: CheckKey, r: GlmResult): CheckOutcome {
  return only(evaluateChecks(r, [planned(key)]));
}
function coxCheck(
  key: CheckKey,
  r: CoxResult,
  functionalForm: readonly FunctionalFormTest[] = [],
): CheckOutcome {
  return only(evaluateCoxChecks(r, [planned(key)], functionalForm));
}

/** Expects "within" at the boundary and "finding" just past it, flagging the boundary subject where the check flags subjects. */
function expectBoundary(inside: CheckOutcome, outside: CheckOutcome, flagsSubjects = false) {
  expect(inside.outcome).toBe("within");
  expect(outside.outcome).toBe("finding");
  if (flagsSubjects) {
    expect(inside.flagged).toEqual([]);
    expect(outside.flagged?.map((f) => f.row)).toEqual([FLAGGED_ROW]);
  }
}

/** The checks the cases below cover, named in each case's title. */
const COVERED: CheckKey[] = [];
const covers = (key: CheckKey) => {
  COVERED.push(key);
  return key;
};

const treatmentIndex = (coefficients: readonly { term: string | null }[]) =>
  coefficients.findIndex((c) => c.term === "arm");

describe("the fits the cases start from", () => {
  it("have 64 subjects and, for the linear model, 4 coefficients", () => {
    expect(linear.n).toBe(N);
    expect(linear.rank).toBe(4);
    expect(poisson.n).toBe(N);
    expect(cox.n).toBe(N);
    expect(treatmentIndex(linear.coefficients)).toBeGreaterThan(0);
    expect(treatmentIndex(cox.coefficients)).toBeGreaterThanOrEqual(0);
  });

  it("every check in the catalogue has a case below", () => {
    const keys = CHECKS.map((c) => c.key);
    expect(keys.sort()).toEqual([...COVERED].sort());
  });
});

describe("observation checks of linear and generalized linear models", () => {
  const withObservations = (columns: Partial<LinearModelResult["observations"]>): LinearModelResult => ({
    ...linear,
    observations: { ...linear.observations, ...columns },
  });

  it(`${covers("cooks_distance")}: exceeds 4/n = 4/64 = 0.0625 (Bollen and Jackman 1990)`, () => {
    expect(CHECK_BY_KEY.get("cooks_distance")!.defaultThreshold).toBe(4);
    expectBoundary(
      linearCheck("cooks_distance", withObservations({ cooksDistance: oneSubject(0.0625) })),
      linearCheck("cooks_distance", withObservations({ cooksDistance: oneSubject(0.0626) })),
      true,
    );
    // the plan's own number is the one applied: 1/n = 0.015625
    expect(
      linearCheck("cooks_distance", withObservations({ cooksDistance: oneSubject(0.0156) }), 1).outcome,
    ).toBe("within");
    expect(
      linearCheck("cooks_distance", withObservations({ cooksDistance: oneSubject(0.0157) }), 1).outcome,
    ).toBe("finding");
  });

  it(`${covers("leverage")}: exceeds 2p/n = 2·4/64 = 0.125 (Hoaglin and Welsch 1978)`, () => {
    expect(CHECK_BY_KEY.get("leverage")!.defaultThreshold).toBe(2);
    expectBoundary(
      linearCheck("leverage", withObservations({ leverage: oneSubject(0.125) })),
      linearCheck("leverage", withObservations({ leverage: oneSubject(0.1251) })),
      true,
    );
  });

  it(`${covers("deletion_residual")}: |externally studentized residual| exceeds 3 (a common screening bound: the catalogue names no publication)`, () => {
    expect(CHECK_BY_KEY.get("deletion_residual")!.defaultThreshold).toBe(3);
    expectBoundary(
      linearCheck("deletion_residual", withObservations({ studentizedExternal: oneSubject(-3) })),
      linearCheck("deletion_residual", withObservations({ studentizedExternal: oneSubject(-3.001) })),
      true,
    );
  });

  it(`${covers("dfbetas_treatment")}: |DFBETAS| on the treatment coefficient exceeds 2/√n = 2/8 = 0.25 (Belsley, Kuh and Welsch 1980)`, () => {
    expect(CHECK_BY_KEY.get("dfbetas_treatment")!.defaultThreshold).toBe(2);
    const j = treatmentIndex(linear.coefficients);
    const dfbetas = (value: number) =>
      linear.observations.dfbetas.map((column, c) => (c === j ? oneSubject(value) : column.map(() => 0)));
    expectBoundary(
      linearCheck("dfbetas_treatment", withObservations({ dfbetas: dfbetas(0.25) })),
      linearCheck("dfbetas_treatment", withObservations({ dfbetas: dfbetas(-0.2501) })),
      true,
    );
  });

  it(`${covers("dffits")}: |DFFITS| exceeds 2√(p/n) = 2√(4/64) = 0.5 (Belsley, Kuh and Welsch 1980)`, () => {
    expect(CHECK_BY_KEY.get("dffits")!.defaultThreshold).toBe(2);
    expectBoundary(
      linearCheck("dffits", withObservations({ dffits: oneSubject(-0.5) })),
      linearCheck("dffits", withObservations({ dffits: oneSubject(0.5001) })),
      true,
    );
  });

  it(`${covers("gvif")}: GVIF^(1/(2·df)) exceeds √5, i.e. VIF 5 for a one-column term (Fox and Monette 1992)`, () => {
    expect(CHECK_BY_KEY.get("gvif")!.defaultThreshold).toBe(Math.sqrt(5));
    const withGvif = (adjusted: number): LinearModelResult => ({
      ...linear,
      vifByPredictor: linear.vifByPredictor.map((v, i) => ({ ...v, adjusted: i === 0 ? adjusted : 1 })),
    });
    expect(linear.vifByPredictor.length).toBeGreaterThan(1);
    expectBoundary(linearCheck("gvif", withGvif(Math.sqrt(5))), linearCheck("gvif", withGvif(2.2361)));
  });
});

describe("tests of assumptions of the linear model: p below 0.05", () => {
  // The 5% level of each test's own publication; a p exactly at 0.05 does not reject.
  const withTests = (tests: Partial<LinearModelResult["tests"]>): LinearModelResult => ({
    ...linear,
    tests: { ...linear.tests, ...tests },
  });
  const cases: [CheckKey, string, (p: number) => LinearModelResult][] = [
    [
      "shapiro_wilk",
      "Shapiro and Wilk 1965; Royston 1995 (AS R94)",
      (p) => withTests({ shapiroWilk: { ...linear.tests.shapiroWilk, p } }),
    ],
    [
      "breusch_pagan",
      "Breusch and Pagan 1979; Koenker 1981",
      (p) => withTests({ breuschPagan: { ...linear.tests.breuschPagan, p } }),
    ],
    [
      "brown_forsythe",
      "Brown and Forsythe 1974",
      (p) => withTests({ brownForsythe: { ...linear.tests.brownForsythe!, p } }),
    ],
    [
      "homogeneity_of_slopes",
      "ANCOVA assumption; EMA guideline on adjustment for baseline covariates, 2015",
      (p) => withTests({ homogeneityOfSlopes: { ...linear.tests.homogeneityOfSlopes!, p } }),
    ],
    ["reset", "Ramsey 1969", (p) => withTests({ reset: { ...linear.tests.reset, p } })],
  ];
  for (const [key, source, at] of cases) {
    it(`${covers(key)}: p < 0.05 (${source})`, () => {
      expect(CHECK_BY_KEY.get(key)!.defaultThreshold).toBe(0.05);
      const inside = linearCheck(key, at(0.05));
      const outside = linearCheck(key, at(0.0499));
      expectBoundary(inside, outside);
      expect([inside.value, outside.value]).toEqual([0.05, 0.0499]);
    });
  }
});

describe("checks of generalized linear models", () => {
  it(`${covers("overdispersion")}: Pearson χ²/df exceeds 1.5 (Hilbe 2011, Negative Binomial Regression, section 7.2)`, () => {
    expect(CHECK_BY_KEY.get("overdispersion")!.defaultThreshold).toBe(1.5);
    const at = (ratio: number): GlmResult => ({
      ...poisson,
      checks: { ...poisson.checks, overdispersion: { ...poisson.checks.overdispersion, ratio } },
    });
    expectBoundary(glmCheck("overdispersion", at(1.5)), glmCheck("overdispersion", at(1.5001)));
  });

  it(`${covers("events_per_variable")}: fewer than 10 events per coefficient (Peduzzi et al. 1996)`, () => {
    expect(CHECK_BY_KEY.get("events_per_variable")!.defaultThreshold).toBe(10);
    const at = (eventsPerVariable: number): GlmResult => ({ ...poisson, eventsPerVariable });
    expectBoundary(glmCheck("events_per_variable", at(10)), glmCheck("events_per_variable", at(9.99)));
  });

  it(`${covers("linearity_glm")}: a quadratic term's likelihood-ratio p < 0.05 (Harrell 2015, Regression Modeling Strategies, section 2.4)`, () => {
    expect(CHECK_BY_KEY.get("linearity_glm")!.defaultThreshold).toBe(0.05);
    const at = (p: number): GlmResult => ({
      ...poisson,
      checks: {
        ...poisson.checks,
        linearity: [
          { term: "base", statistic: 3.84, df: 1, p: 0.5 },
          { term: "age", statistic: 3.84, df: 1, p },
        ],
      },
    });
    expectBoundary(glmCheck("linearity_glm", at(0.05)), glmCheck("linearity_glm", at(0.0499)));
  });

  it(`${covers("treatment_homogeneity_glm")}: joint likelihood-ratio p of the treatment interactions < 0.05 (standard practice: the catalogue names no publication)`, () => {
    expect(CHECK_BY_KEY.get("treatment_homogeneity_glm")!.defaultThreshold).toBe(0.05);
    const at = (p: number): GlmResult => ({
      ...poisson,
      checks: {
        ...poisson.checks,
        homogeneityOfTreatmentEffect: {
          joint: { term: "arm × covariates", statistic: 6, df: 2, p },
          byCovariate: [],
        },
      },
    });
    expectBoundary(
      glmCheck("treatment_homogeneity_glm", at(0.05)),
      glmCheck("treatment_homogeneity_glm", at(0.0499)),
    );
  });
});

describe("checks of Cox models", () => {
  it(`${covers("proportional_hazards")}: the global or any term's test p < 0.05 (Grambsch and Therneau 1994)`, () => {
    expect(CHECK_BY_KEY.get("proportional_hazards")!.defaultThreshold).toBe(0.05);
    const ph = cox.tests.proportionalHazards;
    const at = (global: number, term: number): CoxResult => ({
      ...cox,
      tests: {
        ...cox.tests,
        proportionalHazards: {
          ...ph,
          global: { ...ph.global, p: global },
          terms: ph.terms.map((t, i) => ({ ...t, p: i === 0 ? term : 0.9 })),
        },
      },
    });
    expect(ph.terms.length).toBeGreaterThan(0);
    expectBoundary(
      coxCheck("proportional_hazards", at(0.05, 0.05)),
      coxCheck("proportional_hazards", at(0.0499, 0.5)),
    );
    expect(coxCheck("proportional_hazards", at(0.5, 0.0499)).outcome).toBe("finding");
  });

  it(`${covers("functional_form_cox")}: a squared term's likelihood-ratio p < 0.05 (Therneau, Grambsch and Fleming 1990)`, () => {
    expect(CHECK_BY_KEY.get("functional_form_cox")!.defaultThreshold).toBe(0.05);
    const at = (p: number): FunctionalFormTest[] => [{ term: "age", statistic: 3.84, p }];
    expectBoundary(
      coxCheck("functional_form_cox", cox, at(0.05)),
      coxCheck("functional_form_cox", cox, at(0.0499)),
    );
  });

  it(`${covers("dfbetas_treatment_cox")}: |DFBETAS| on the treatment log hazard ratio exceeds 2/√n = 0.25 (Belsley, Kuh and Welsch 1980)`, () => {
    expect(CHECK_BY_KEY.get("dfbetas_treatment_cox")!.defaultThreshold).toBe(2);
    const j = treatmentIndex(cox.coefficients);
    const at = (value: number): CoxResult => ({
      ...cox,
      observations: {
        ...cox.observations,
        dfbetas: cox.observations.dfbetas.map((column, c) =>
          c === j ? oneSubject(value) : column.map(() => 0),
        ),
      },
    });
    expect(cox.observations.row[FLAGGED_ROW - 1]).toBe(FLAGGED_ROW);
    expectBoundary(
      coxCheck("dfbetas_treatment_cox", at(-0.25)),
      coxCheck("dfbetas_treatment_cox", at(0.2501)),
      true,
    );
  });

  it(`${covers("events_per_coefficient")}: fewer than 10 events per coefficient (Peduzzi et al. 1995)`, () => {
    expect(CHECK_BY_KEY.get("events_per_coefficient")!.defaultThreshold).toBe(10);
    const at = (eventsPerCoefficient: number): CoxResult => ({
      ...cox,
      fit: { ...cox.fit, eventsPerCoefficient },
    });
    expectBoundary(coxCheck("events_per_coefficient", at(10)), coxCheck("events_per_coefficient", at(9.99)));
  });
});

describe("checks of repeated-measures (MMRM) models", () => {
  // The invented three-arm trial with dropout of tests/reference/repeated/generate.R (120 subjects,
  // 40 per arm, visits Week 2 to Week 16), fitted with an unstructured covariance by REML.
  const reference = join(import.meta.dirname, "..", "reference", "repeated");
  const repeated = fitRepeatedModel(
    JSON.parse(readFileSync(join(reference, "models", "trial-unstructured-reml.json"), "utf8")),
    readCsvText(readFileSync(join(reference, "data", "trial.csv"), "utf8")),
  );
  const repeatedCheck = (key: CheckKey, r: RepeatedResult, threshold?: number) =>
    only(evaluateRepeatedChecks(r, [planned(key, threshold)]));

  it(`${covers("repeated_convergence")}: the structure used is not the first k = 1 of the plan's list (the analysis as pre-specified, ICH E9 section 5.1)`, () => {
    expect(CHECK_BY_KEY.get("repeated_convergence")!.defaultThreshold).toBe(1);
    const usedAt = (structure: "unstructured" | "toeplitz"): RepeatedResult => ({
      ...repeated,
      spec: { ...repeated.spec, repeated: { ...repeated.spec.repeated, fallback: ["toeplitz"] } },
      covariance: { ...repeated.covariance, structure },
    });
    const inside = repeatedCheck("repeated_convergence", usedAt("unstructured"));
    const outside = repeatedCheck("repeated_convergence", usedAt("toeplitz"));
    expectBoundary(inside, outside);
    expect([inside.numbers?.statistic, outside.numbers?.statistic]).toEqual([1, 2]);
    // the plan's own number: the first fallback is within plan at k = 2
    expect(repeatedCheck("repeated_convergence", usedAt("toeplitz"), 2).outcome).toBe("within");
    // a fit that did not converge is a finding wherever its structure stands
    const unconverged = { ...repeated, covariance: { ...repeated.covariance, converged: false } };
    expect(repeatedCheck("repeated_convergence", unconverged).outcome).toBe("finding");
  });

  // The two tests of the normalized residuals compute their p from the residuals; the plan's level
  // is set exactly at that p (within plan: the rule is strict) and just above it (a finding).
  const justAbove = (p: number) => p * (1 + 1e-9);

  it(`${covers("repeated_normality")}: Shapiro–Wilk p < 0.05 on the normalized residuals (Shapiro and Wilk 1965)`, () => {
    expect(CHECK_BY_KEY.get("repeated_normality")!.defaultThreshold).toBe(0.05);
    const p = repeatedCheck("repeated_normality", repeated).numbers!.p!;
    expectBoundary(
      repeatedCheck("repeated_normality", repeated, p),
      repeatedCheck("repeated_normality", repeated, justAbove(p)),
    );
  });

  it(`${covers("repeated_spread")}: Brown–Forsythe p < 0.05 across the visit-by-arm cells (Brown and Forsythe 1974)`, () => {
    expect(CHECK_BY_KEY.get("repeated_spread")!.defaultThreshold).toBe(0.05);
    const p = repeatedCheck("repeated_spread", repeated).numbers!.p!;
    expectBoundary(
      repeatedCheck("repeated_spread", repeated, p),
      repeatedCheck("repeated_spread", repeated, justAbove(p)),
    );
  });

  it(`${covers("repeated_influence")}: a subject's Cook's distance exceeds 4/m = 4/120 (Christensen, Pearson and Johnson 1992; Bollen and Jackman 1990)`, () => {
    expect(CHECK_BY_KEY.get("repeated_influence")!.defaultThreshold).toBe(4);
    const m = repeated.subjects.length;
    expect(m).toBe(120);
    const target = repeated.subjects[5];
    const at = (value: number): RepeatedResult => ({
      ...repeated,
      subjects: repeated.subjects.map((s) => ({ ...s, cooksDistance: s === target ? value : 0 })),
    });
    const inside = repeatedCheck("repeated_influence", at(4 / m));
    const outside = repeatedCheck("repeated_influence", at(4 / m + 1e-6));
    expectBoundary(inside, outside);
    expect(inside.numbers?.threshold).toBe(4 / m);
    // the flagged subject by id, its first data row, and every row of its records
    const rows = repeated.observations.row.filter((_, i) => repeated.observations.id[i] === target.id);
    expect(outside.flagged).toEqual([
      {
        rank: 1,
        row: Math.min(...rows),
        id: target.id,
        value: 4 / m + 1e-6,
        rows: [...rows].sort((a, b) => a - b),
      },
    ]);
    expect(rows.length).toBe(target.records);
  });

  it(`${covers("repeated_primary_visit")}: fewer than 0.8 of an arm's analysed subjects have a record at the primary visit (the 5-and-20 rule, Schulz and Grimes 2002)`, () => {
    expect(CHECK_BY_KEY.get("repeated_primary_visit")!.defaultThreshold).toBe(0.8);
    const visit = repeated.influence.primaryVisit;
    // 40 subjects per arm: 32 of 40 is 0.8 exactly, 31 of 40 the next step below
    const at = (subjects: number): RepeatedResult => ({
      ...repeated,
      counts: repeated.counts.map((c) =>
        c.visit !== visit ? c : { ...c, subjects: c.level === "Dose 20 mg" ? subjects : 40 },
      ),
    });
    const inside = repeatedCheck("repeated_primary_visit", at(32));
    const outside = repeatedCheck("repeated_primary_visit", at(31));
    expectBoundary(inside, outside);
    expect([inside.value, outside.value]).toEqual([0.8, 0.775]);
  });
});
