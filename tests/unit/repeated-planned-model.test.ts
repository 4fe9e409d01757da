/**
 * Planning a repeated-measures (MMRM) model: the editor's fields validated against a locked long
 * dataset's column metadata (each refusal beside its field, saying what to do), a valid plan
 * stored through the plan service and read back into the editor unchanged, its words on the plan
 * page and in the comparison of two versions, and the API document accepting it as stored.
 *
 * The dataset is the invented three-arm trial with dropout, tests/fixtures/mmrm-trial.csv (five
 * visits), with two visit-number columns added that do not pair with the visits. The stored
 * specification is fitted by the engine and compared with R's nlme::gls on the same data
 * (tests/reference/repeated/values/trial-unstructured-reml.json, written by
 * tests/reference/repeated/generate.R), so the plan states the model R fitted.
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import Ajv2020 from "ajv/dist/2020.js";
import addFormats from "ajv-formats";
import { useTempDatabase } from "../support/temp-db";
import { expectClose } from "../reference/compare";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const { readPlannedModelForm, toForm, validatePlannedModel } = await import("~/.server/plans/planned-model");
const { comparePlanVersions } = await import("~/.server/plans/plan-diff");
const { plannedModelView } = await import("~/.server/plans/plan-view");
const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
const datasets = await import("~/.server/datasets/datasets.server");
const { actorOf } = await import("~/.server/people.server");
const { openApiDocument } = await import("~/.server/api/openapi");
const { parseRepeatedSpec, covarianceStructureSchema } = await import("~/engine/repeated/repeated-spec");
const { COVARIANCE_STRUCTURES } = await import("~/engine/repeated/repeated-names");
const { fitRepeatedModel } = await import("~/engine/repeated/repeated-model");
const { REPEATED_CHECKS } = await import("~/engine/repeated/repeated-check-catalogue");
const { readCsvText } = await import("~/engine-io/read-csv");
const { eq } = await import("drizzle-orm");

const FIXTURE = readFileSync(join("tests", "fixtures", "mmrm-trial.csv"), "utf8");

/**
 * The fixture with two visit-number columns that do not pair with the visits: VISNUM_SPLIT
 * numbers every other Week 16 record 17 (six values for five visits), VISNUM_SHIFT numbers the
 * first Week 2 record 4 (five values, but Week 2 and Week 4 rows mixed).
 */
function longCsv(): string {
  const lines = FIXTURE.trim().split(/\r?\n/);
  let week16 = 0;
  let shifted = false;
  return [
    `${lines[0]},"VISNUM_SPLIT","VISNUM_SHIFT"`,
    ...lines.slice(1).map((line) => {
      const visitNumber = Number(line.split(",")[3]);
      const split = visitNumber === 16 && week16++ % 2 === 1 ? 17 : visitNumber;
      const shift = visitNumber === 2 && !shifted ? ((shifted = true), 4) : visitNumber;
      return `${line},${split},${shift}`;
    }),
  ].join("\n");
}

let studyId = "";
type Actor = { id: string; name: string };
let priya: Actor;

async function person(email: string) {
  const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
  return p;
}

async function lockedColumns() {
  return (await listLockedVersions(studyId)).map((v) => ({ name: v.datasetName, columns: v.columns }));
}

/** The editor's form of the usual MMRM (the shape of the reference model trial-unstructured-reml). */
function mmrmForm(change: Record<string, string | string[] | null> = {}): FormData {
  const fields: Record<string, string | string[]> = {
    key: "mmrm",
    title: "Change from baseline by visit",
    datasetName: "adlong",
    response: "CHG",
    family: "repeated",
    treatment: "ARM",
    treatmentReference: "Placebo",
    covariate: ["AVISIT", "BASE"],
    interaction: ["ARM|AVISIT", "BASE|AVISIT"],
    subject: "USUBJID",
    visit: "AVISIT",
    visitOrder: "AVISITN",
    covariance: "unstructured",
    fallback: ["toeplitz", "compound-symmetry"],
    df: "satterthwaite",
    method: "reml",
    primaryVisit: "Week 16",
    contrasts: "pairwise",
    multiplicity: "holm",
    "sensitivity:exclude_influential": "on",
    "sensitivity:repeated_structure": "on",
    "sensitivity:structure": "ar1-heterogeneous",
    ...Object.fromEntries(REPEATED_CHECKS.map((c) => [`check:${c.key}:enabled`, "on"])),
  };
  for (const [k, v] of Object.entries(change)) {
    if (v === null) delete fields[k];
    else fields[k] = v;
  }
  const f = new FormData();
  for (const [k, v] of Object.entries(fields)) for (const x of [v].flat()) f.append(k, x);
  return f;
}

async function errorsOf(change: Record<string, string | string[] | null>) {
  const v = validatePlannedModel(readPlannedModelForm(mmrmForm(change)), await lockedColumns(), []);
  if (v.ok) throw new Error("the form was accepted");
  return v.errors;
}

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  const p = await person("priya.lindqvist@plumbline.example");
  priya = { id: p.id, name: p.displayName };
  const dana = actorOf(await person("dana.okafor@plumbline.example"));
  const up = await datasets.uploadBytes(dana, {
    studyId,
    datasetName: "adlong",
    fileName: "adlong.csv",
    bytes: Buffer.from(longCsv()),
  });
  if (!up.ok) throw new Error(up.problems.join(" "));
  const detail = await datasets.getVersionDetail(studyId, up.versionId);
  for (const hit of detail?.hits ?? []) {
    const done = await datasets.recordNotIdentifier(
      dana,
      studyId,
      hit.id,
      "Invented subject codes of test data.",
    );
    if (!done.ok) throw new Error(done.message);
  }
  const locked = await datasets.lockVersion(
    { ...dana, signedInAt: new Date().toISOString() },
    studyId,
    up.versionId,
  );
  if (!locked.ok) throw new Error(locked.message);
});

describe("a valid repeated-measures plan", () => {
  it("offers the seven covariance structures of the specification, in its order", () => {
    expect(COVARIANCE_STRUCTURES).toEqual(covarianceStructureSchema.options);
  });

  it("stores the engine's repeated-measures specification with the MMRM checks only", async () => {
    const v = validatePlannedModel(readPlannedModelForm(mmrmForm()), await lockedColumns(), []);
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    expect(v.model.spec).toEqual({
      response: "CHG",
      family: "gaussian",
      intercept: true,
      terms: [
        { variable: "ARM", categorical: true, reference: "Placebo" },
        { variable: "AVISIT", categorical: true },
        { variable: "BASE" },
        { interaction: ["ARM", "AVISIT"] },
        { interaction: ["BASE", "AVISIT"] },
      ],
      id: "USUBJID",
      treatment: "ARM",
      contrasts: "pairwise",
      multiplicity: "holm",
      repeated: {
        subject: "USUBJID",
        visit: "AVISIT",
        visitOrder: "AVISITN",
        covariance: "unstructured",
        fallback: ["toeplitz", "compound-symmetry"],
        df: "satterthwaite",
        method: "reml",
        primaryVisit: "Week 16",
      },
    });
    expect(() => parseRepeatedSpec(v.model.spec)).not.toThrow();
    expect(v.model.checks.filter((c) => c.enabled).map((c) => c.key)).toEqual(
      REPEATED_CHECKS.map((c) => c.key),
    );
    expect(v.model.sensitivity).toEqual([
      { kind: "exclude_influential" },
      { kind: "repeated_structure", structure: "ar1-heterogeneous" },
    ]);
  });

  it("states the model R's nlme::gls fitted (log-likelihood and AIC of trial-unstructured-reml)", async () => {
    const v = validatePlannedModel(
      readPlannedModelForm(mmrmForm({ primaryVisit: null, fallback: null })),
      await lockedColumns(),
      [],
    );
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    const R = JSON.parse(
      readFileSync(join("tests", "reference", "repeated", "values", "trial-unstructured-reml.json"), "utf8"),
    ) as { logLik: number; aic: number };
    const fit = fitRepeatedModel(v.model.spec, readCsvText(FIXTURE));
    expect(fit.covariance.structure).toBe("unstructured");
    expectClose(fit.covariance.logLik, R.logLik, 1e-6, "REML log-likelihood (nlme::gls)");
    expectClose(fit.covariance.aic, R.aic, 1e-6, "AIC (nlme::gls)");
    // no primary visit planned: the last visit by AVISITN
    expect(fit.influence.primaryVisit).toBe("Week 16");
  });

  it("is stored by the plan service and read back into the editor unchanged", async () => {
    const v = validatePlannedModel(readPlannedModelForm(mmrmForm()), await lockedColumns(), []);
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    const created = await plans.createPlan(priya, studyId, {
      title: "Repeated-measures models",
      sapName: "SAP",
      sapVersion: "1.0",
      sapDate: "2026-10-01",
    });
    const id = await plans.savePlannedModel(priya, studyId, created.versionId, 1, null, v.model);
    const stored = await plans.getPlannedModel(id);
    expect(stored.spec).toEqual(v.model.spec);
    expect(stored.sensitivity).toEqual(v.model.sensitivity);

    const form = toForm(stored);
    expect(form.family).toBe("repeated");
    expect(form.repeated).toEqual({
      subject: "USUBJID",
      visit: "AVISIT",
      visitOrder: "AVISITN",
      covariance: "unstructured",
      fallback: ["toeplitz", "compound-symmetry"],
      df: "satterthwaite",
      method: "reml",
      primaryVisit: "Week 16",
    });
    // saved again from the editor's fields, the plan is the same
    const again = validatePlannedModel(form, await lockedColumns(), []);
    if (!again.ok) throw new Error(JSON.stringify(again.errors));
    expect(again.model).toEqual({
      key: stored.key,
      title: stored.title,
      datasetName: stored.datasetName,
      spec: stored.spec,
      checks: stored.checks,
      sensitivity: stored.sensitivity,
    });

    const view = plannedModelView(stored);
    expect(view.family).toBe("repeated");
    expect(view.repeated).toEqual([
      ["Subject", "USUBJID"],
      ["Visit", "AVISIT, ordered by AVISITN"],
      ["Covariance of the visits", "Unstructured; if it does not converge, Toeplitz, then compound symmetry"],
      ["Degrees of freedom", "Satterthwaite"],
      ["Estimation", "Restricted maximum likelihood (REML)"],
      ["Primary visit", "Week 16"],
    ]);
    expect(view.sensitivity).toContain("Another covariance structure of the visits: heterogeneous AR(1)");
  });

  it("names the repeated part's changes in the comparison of two versions", async () => {
    const a = validatePlannedModel(readPlannedModelForm(mmrmForm()), await lockedColumns(), []);
    const b = validatePlannedModel(
      readPlannedModelForm(
        mmrmForm({
          covariance: "toeplitz",
          fallback: ["compound-symmetry"],
          df: "kenward-roger",
          visitOrder: null,
          primaryVisit: null,
          "sensitivity:structure": "compound-symmetry",
        }),
      ),
      await lockedColumns(),
      [],
    );
    if (!a.ok || !b.ok) throw new Error("both versions are valid");
    const header = { title: "Plan", sapName: null, sapVersion: null, sapDate: null };
    const changes = comparePlanVersions({ header, models: [a.model] }, { header, models: [b.model] }).map(
      (c) => c.what,
    );
    expect(changes).toEqual([
      "Visit: AVISIT, ordered by AVISITN → AVISIT, ordered by its values",
      "Covariance of the visits: Unstructured; if it does not converge, Toeplitz, then compound symmetry → Toeplitz; if it does not converge, compound symmetry",
      "Degrees of freedom: Satterthwaite → Kenward–Roger",
      "Primary visit: Week 16 → the last visit by order",
      "Another covariance structure of the visits: heterogeneous AR(1) → compound symmetry",
    ]);
    // a linear model turned into a repeated-measures one says so
    const linearSpec = Object.fromEntries(Object.entries(a.model.spec).filter(([k]) => k !== "repeated"));
    const linear = { ...a.model, spec: linearSpec as typeof a.model.spec };
    const family = comparePlanVersions({ header, models: [linear] }, { header, models: [a.model] }).map(
      (c) => c.what,
    );
    expect(family).toContain("Family: gaussian → repeated measures (MMRM)");
    expect(family).toContain("Subject: none → USUBJID");
  });

  it("is an answer the API document describes (the planned model's schema)", async () => {
    const v = validatePlannedModel(readPlannedModelForm(mmrmForm()), await lockedColumns(), []);
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    const ajv = new Ajv2020({ strict: false, allErrors: true });
    addFormats(ajv);
    ajv.addSchema(openApiDocument(), "openapi.json");
    const validate = ajv.compile({ $ref: "openapi.json#/components/schemas/PlannedModel" });
    const answer = { id: "m1", ...v.model };
    expect(validate(answer), JSON.stringify(validate.errors)).toBe(true);
    // a field the document does not name is refused, so the repeated part is described, not let through
    const spec = parseRepeatedSpec(v.model.spec);
    expect(validate({ ...answer, spec: { ...spec, repeated: { ...spec.repeated, extra: 1 } } })).toBe(false);
  });
});

describe("a repeated-measures plan that does not fit the dataset", () => {
  it("needs a numeric endpoint and refuses weights and an offset", async () => {
    const errors = await errorsOf({
      response: "ARM",
      treatment: "",
      treatmentReference: "",
      weights: "BASE",
      offset: "BASE",
      interaction: "BASE|AVISIT",
    });
    expect(errors.response).toBe(
      "ARM is text, not numeric: a repeated-measures model needs a numeric endpoint, usually the change from baseline.",
    );
    expect(errors.weights).toBe(
      "A repeated-measures model takes no prior weights: the covariance of the visits weighs the records. Choose none.",
    );
    expect(errors.offset).toBe("A repeated-measures model takes no offset: choose none.");
  });

  it("needs the subject column, present and not a term of the model", async () => {
    expect((await errorsOf({ subject: "" })).subject).toBe(
      "Choose the subject identifier column (e.g. USUBJID): the records of one subject are correlated.",
    );
    expect((await errorsOf({ subject: "SUBJID" })).subject).toBe('Column "SUBJID" is not in adlong.');
    expect((await errorsOf({ subject: "AVISIT" })).subject).toBe(
      "The subject and visit columns must differ.",
    );
    expect((await errorsOf({ subject: "ARM" })).subject).toBe(
      "The subject column cannot also be the treatment: choose the subject identifier.",
    );
    expect((await errorsOf({ covariate: ["AVISIT", "BASE", "USUBJID"] })).subject).toBe(
      "USUBJID identifies subjects; untick it among the covariates (a term per subject would leave nothing for the covariance of the visits).",
    );
  });

  it("needs the visit column categorical, with a few visits, and a main term of the model", async () => {
    expect((await errorsOf({ visit: "" })).visit).toBe("Choose the visit column (e.g. AVISIT).");
    expect((await errorsOf({ visit: "BASE", primaryVisit: null, visitOrder: null })).visit).toBe(
      "BASE must be categorical with a few visits; it has too many distinct values.",
    );
    expect((await errorsOf({ covariate: ["BASE"], interaction: [] })).visit).toBe(
      "AVISIT must also be a main term of the model: tick it among the covariates, as categorical.",
    );
    // the visit number as the visit column, entered as a straight line
    const continuous = await errorsOf({
      visit: "AVISITN",
      visitOrder: null,
      primaryVisit: null,
      covariate: ["AVISITN", "BASE"],
      "as:AVISITN": "continuous",
      interaction: [],
    });
    expect(continuous.visit).toBe(
      "AVISITN enters the model as continuous: mark it categorical among the covariates (a mean per visit).",
    );
  });

  it("needs a visit order column that is numeric with one value per visit", async () => {
    expect((await errorsOf({ visitOrder: "ARM" })).visitOrder).toBe(
      "ARM is text, not numeric: the visit order column gives each visit a number (e.g. AVISITN), so choose a numeric column or none.",
    );
    expect((await errorsOf({ visitOrder: "VISNUM_SPLIT" })).visitOrder).toBe(
      "VISNUM_SPLIT has 6 distinct values but AVISIT has 5 visits: the order column needs exactly one value per visit.",
    );
    expect((await errorsOf({ visitOrder: "VISNUM_SHIFT" })).visitOrder).toBe(
      "The rows of VISNUM_SHIFT do not pair with the visits of AVISIT (rows per value 88, 94, 106, 116, 119; rows per visit 88, 94, 106, 115, 120): every row of a visit must carry that visit's one order value.",
    );
    expect((await errorsOf({ visitOrder: "USUBJID" })).visitOrder).toBe(
      "USUBJID is the subject column: choose the column that numbers the visits, or none.",
    );
  });

  it("needs a planned structure, and fallbacks that are other structures, each once", async () => {
    expect((await errorsOf({ covariance: "spherical" })).covariance).toBe(
      "Choose the covariance structure of the visits: unstructured, Toeplitz, heterogeneous Toeplitz, AR(1), heterogeneous AR(1), compound symmetry, heterogeneous compound symmetry.",
    );
    expect((await errorsOf({ fallback: ["toeplitz", "unstructured"] })).fallback).toBe(
      "Unstructured is the planned structure; a fallback must be another structure: remove it from the list.",
    );
    expect((await errorsOf({ fallback: ["ar1", "toeplitz", "ar1"] })).fallback).toBe(
      "AR(1) is in the fallback list twice: keep it once, where the SAP orders it.",
    );
    expect((await errorsOf({ fallback: ["banded"] })).fallback).toBe(
      '"banded" is not a covariance structure Plumbline fits; choose from the list.',
    );
  });

  it("needs REML, and structures it is computed for, with Kenward–Roger degrees of freedom", async () => {
    const ml = await errorsOf({ df: "kenward-roger", method: "ml" });
    expect(ml.method).toBe(
      "Kenward–Roger degrees of freedom need a REML fit: choose REML, or Satterthwaite degrees of freedom with ML.",
    );
    expect((await errorsOf({ df: "kenward-roger", fallback: ["ar1"] })).df).toBe(
      "Kenward–Roger degrees of freedom are computed for the unstructured, Toeplitz, compound symmetry structures, not for AR(1): choose Satterthwaite, or change the structure and its fallbacks.",
    );
    expect((await errorsOf({ df: "welch" })).df).toBe(
      "Choose the degrees of freedom: Satterthwaite, Kenward–Roger or residual.",
    );
    expect((await errorsOf({ method: "bayes" })).method).toBe("Choose REML or ML.");
  });

  it("needs the primary visit to be a visit of the visit column", async () => {
    expect((await errorsOf({ primaryVisit: "Week 24" })).primaryVisit).toBe(
      '"Week 24" is not a visit of AVISIT; its visits are Week 2, Week 4, Week 8, Week 12, Week 16.',
    );
  });

  it("needs the sensitivity analysis's structure to differ from the planned one", async () => {
    expect((await errorsOf({ "sensitivity:structure": "unstructured" }))["sensitivity:structure"]).toBe(
      "Unstructured is the planned structure, so the analysis would repeat the primary one: choose another structure.",
    );
    expect((await errorsOf({ "sensitivity:structure": "" }))["sensitivity:structure"]).toBe(
      "Choose the covariance structure of the sensitivity analysis.",
    );
    expect(
      (await errorsOf({ df: "kenward-roger", fallback: null, "sensitivity:structure": "ar1" }))[
        "sensitivity:structure"
      ],
    ).toBe(
      "Kenward–Roger degrees of freedom are computed for the unstructured, Toeplitz, compound symmetry structures, not for AR(1): choose one of those, or Satterthwaite degrees of freedom.",
    );
  });

  it("refuses the analyses and values of other model types beside their fields", async () => {
    const errors = await errorsOf({
      "sensitivity:robust_hc3": "on",
      "published:0:quantity": "contrast",
      "published:0:level": "Dose 20 mg",
      "published:0:statistic": "estimate",
      "published:0:value": "-2.1",
    });
    expect(errors["sensitivity:robust_hc3"]).toMatch(/^Robust \(HC3\) standard errors apply to linear/);
    expect(errors["published:0:quantity"]).toBe(
      "Published values are compared for linear and generalized linear models; remove this row for a repeated-measures model.",
    );
  });
});
