/**
 * A time-to-event (Cox) model from plan to rerun through the services on a real SQLite file:
 * the editor's fields validated against the locked dataset's columns, a stratified Cox model
 * approved and rerun as a background job, its checks and findings, the stored result's
 * determinism, and the figures' data. Estimates and the Kaplan–Meier curves are compared with
 * R's survival package (coxph, survfit) on the same invented data
 * (tests/reference/survival/values/trial-breslow-cluster.json, written by
 * tests/reference/survival/generate.R; the cluster there changes only the standard errors), and
 * the sensitivity analyses with R's answers written by tests/reference/survival/generate-sensitivity.R.
 */
import { beforeAll, describe, expect, it } from "vitest";
import {
  COX_CHECK_KEYS,
  coxCsv,
  coxForm,
  coxReference,
  coxSensitivityReference,
} from "../support/cox-dataset";
import { useTempDatabase } from "../support/temp-db";
import { expectClose } from "../reference/compare";
import { expectWellFormedFigure } from "../support/figure-checks";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
const { comparePlanVersions } = await import("~/.server/plans/plan-diff");
const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
const datasets = await import("~/.server/datasets/datasets.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { figureData } = await import("~/figures/registry");
const { rerunView, reportedContrasts } = await import("~/.server/reruns/rerun-view.server");
const { redaction } = await import("~/.server/redaction.server");
const { rerunTable } = await import("~/.server/reruns/what-if.server");
const { loadLockedTable } = await import("~/.server/datasets/catalog.server");
const { coxFigureList } = await import("~/figures/cox/cox-figure-data");
const { figureSpec } = await import("~/figures/registry");
const { forestSpec } = await import("~/figures/forest");
const { toVega } = await import("~/.server/figures/compile.server");
const findings = await import("~/.server/reruns/findings.server");
const { buildAppendixContent } = await import("~/.server/appendix/build-content.server");
const { getReport } = await import("~/.server/reports/reports.server");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { actorOf } = await import("~/.server/people.server");
const { eq } = await import("drizzle-orm");

const R = coxReference();
const TOL = 1e-6;
let studyId = "";
let tteVersionId = "";
type Actor = { id: string; name: string };
let priya: Actor;
let tomas: Actor;

async function person(email: string) {
  const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
  return p;
}

async function drain(): Promise<void> {
  while (await runOneJob()) {
    // run every queued job
  }
}

async function lockedColumns() {
  return (await listLockedVersions(studyId)).map((v) => ({ name: v.datasetName, columns: v.columns }));
}

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  const p = await person("priya.lindqvist@plumbline.example");
  const q = await person("tomas.berg@plumbline.example");
  priya = { id: p.id, name: p.displayName };
  tomas = { id: q.id, name: q.displayName };
  const dana = actorOf(await person("dana.okafor@plumbline.example"));
  const up = await datasets.uploadBytes(dana, {
    studyId,
    datasetName: "adtte",
    fileName: "adtte.csv",
    bytes: coxCsv(),
  });
  if (!up.ok) throw new Error(up.problems.join(" "));
  const detail = await datasets.getVersionDetail(studyId, up.versionId);
  for (const hit of detail?.hits ?? []) {
    const done = await datasets.recordNotIdentifier(
      dana,
      studyId,
      hit.id,
      "Invented subject and site codes of generated test data.",
    );
    if (!done.ok) throw new Error(done.message);
  }
  const locked = await datasets.lockVersion(
    { ...dana, signedInAt: new Date().toISOString() },
    studyId,
    up.versionId,
  );
  if (!locked.ok) throw new Error(locked.message);
  tteVersionId = up.versionId;
});

describe("planning a time-to-event model", () => {
  it("names each field that does not fit the locked dataset", async () => {
    const bad = coxForm();
    bad.set("response", "TRTP");
    bad.set("statusColumn", "CNSR");
    bad.delete("eventValue");
    bad.append("eventValue", "7");
    bad.set("ties", "exact");
    bad.delete("stratum");
    bad.append("stratum", "AGE");
    const result = validatePlannedModel(readPlannedModelForm(bad), await lockedColumns(), []);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors.response).toMatch(
      /TRTP is text, not numeric: a time-to-event model needs the follow-up time/,
    );
    expect(result.errors.eventValue).toMatch(/CNSR has no value "7"; its values are 0, 1/);
    expect(result.errors.ties).toMatch(/Efron or Breslow/);
    expect(result.errors.stratum).toMatch(/AGE is already in the model/);
  });

  it("refuses a status column with every value ticked as an event, and a missing status column", async () => {
    const all = coxForm();
    all.append("eventValue", "1");
    const r1 = validatePlannedModel(readPlannedModelForm(all), await lockedColumns(), []);
    expect(r1.ok).toBe(false);
    if (!r1.ok) expect(r1.errors.eventValue).toMatch(/Every value of CNSR is ticked as an event/);
    const none = coxForm();
    none.set("statusColumn", "");
    const r2 = validatePlannedModel(readPlannedModelForm(none), await lockedColumns(), []);
    expect(r2.ok).toBe(false);
    if (!r2.ok)
      expect(r2.errors.statusColumn).toMatch(/Choose the column that says whether the event happened/);
  });

  it("stores the engine's Cox specification with the Cox checks only", async () => {
    const v = validatePlannedModel(readPlannedModelForm(coxForm()), await lockedColumns(), []);
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    expect(v.model.spec).toEqual({
      family: "cox",
      response: "AVAL",
      status: { column: "CNSR", event: [0] },
      terms: [
        { variable: "TRTP", categorical: true, reference: "Placebo" },
        { variable: "AGE" },
        { variable: "BASE" },
        { variable: "STRAT2", categorical: true },
      ],
      treatment: "TRTP",
      strata: ["STRAT1"],
      ties: "breslow",
      id: "USUBJID",
      proportionalHazards: { transform: "identity" },
    });
    expect(v.model.checks.filter((c) => c.enabled).map((c) => c.key)).toEqual(COX_CHECK_KEYS);
  });
});

describe("rerunning a stratified Cox model", () => {
  let rerunId = "";
  let doc: NonNullable<Awaited<ReturnType<typeof reruns.getRerun>>["doc"]>;

  beforeAll(async () => {
    const created = await plans.createPlan(priya, studyId, {
      title: "Time-to-event models",
      sapName: "SAP",
      sapVersion: "1.0",
      sapDate: "2026-10-01",
    });
    const v = validatePlannedModel(readPlannedModelForm(coxForm()), await lockedColumns(), []);
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    const modelId = await plans.savePlannedModel(priya, studyId, created.versionId, 1, null, v.model);
    await plans.submitForApproval(priya, studyId, created.versionId, 2);
    await plans.approvePlanVersion(
      { ...tomas, signedInAt: new Date().toISOString() },
      studyId,
      created.versionId,
    );
    rerunId = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId: tteVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const got = await reruns.getRerun(studyId, rerunId);
    expect(got.rerun.status, got.rerun.failureReason ?? "").toBe("completed");
    doc = got.doc!;
  });

  it("estimates the log hazard ratios and hazard ratios of R's coxph", () => {
    const r = doc.result;
    if (r.kind !== "cox") throw new Error("not a Cox result");
    expect(r.coefficients.map((c) => c.name)).toEqual([
      "TRTP: Active",
      "AGE",
      "BASE",
      "STRAT2: R2",
      "STRAT2: R3",
    ]);
    r.coefficients.forEach((c, j) =>
      expectClose(c.estimate, R.coefficients[j].estimate, TOL, `${c.name} (R ${R.coefficients[j].rName})`),
    );
    r.ratios.forEach((h, j) => expectClose(h.ratio, R.coefficients[j].ratio, TOL, `${h.name} hazard ratio`));
  });

  it("ends every planned Cox check as within plan, finding or not computed, with findings stored for assessment", async () => {
    expect(doc.checks.map((c) => c.key)).toEqual(COX_CHECK_KEYS);
    for (const c of doc.checks) expect(["within", "finding", "not_computed"]).toContain(c.outcome);
    const events = doc.checks.find((c) => c.key === "events_per_coefficient")!;
    expect(events.outcome).toBe("within");
    const influence = doc.checks.find((c) => c.key === "dfbetas_treatment_cox")!;
    expect(influence.threshold).toMatch(/^2\/√n = /);
    const stored = await db.select().from(t.findings).where(eq(t.findings.rerunId, rerunId));
    expect(stored.map((f) => f.checkKey).sort()).toEqual(
      doc.checks
        .filter((c) => c.outcome === "finding")
        .map((c) => c.key)
        .sort(),
    );
    const ff = doc.checks.find((c) => c.key === "functional_form_cox")!;
    expect(ff.statistic).toMatch(/likelihood-ratio statistic \d+\.\d{2} \(χ² with 1 degree of freedom\)/);
    expect(influence.statistic).toMatch(/^largest absolute DFBETAS on the treatment effect \d/);
    expect(influence.numbers).toMatchObject({ compares: "statistic above" });
  });

  it("stores the same bytes when rerun with the same inputs", async () => {
    const got = await reruns.getRerun(studyId, rerunId);
    const again = await reruns.startRerun(priya, studyId, {
      plannedModelId: got.rerun.plannedModelId,
      datasetVersionId: tteVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const twin = await reruns.getRerun(studyId, again);
    expect(twin.rerun.resultSha256).toBe(got.rerun.resultSha256);
  });

  it("shows subject ids only to roles that see rows", () => {
    const staff = rerunView(doc, redaction(true, [doc]));
    const reader = rerunView(doc, redaction(false, [doc]));
    const influence = (v: typeof staff) => v.checks.find((c) => c.key === "dfbetas_treatment_cox")!;
    if (influence(staff).flaggedCount > 0) {
      expect(influence(staff).flagged[0].who).toMatch(/^INV-/);
      expect(influence(reader).flagged[0].who).toMatch(/^subject ranked 1$/);
      expect(JSON.stringify(reader)).not.toMatch(/INV-\d{4}/);
    }
  });

  it("draws the Kaplan–Meier figure from R's survfit curves by arm, with numbers at risk", () => {
    const d = figureData(doc, "kaplan_meier", { withSubjectIds: true });
    if (d.figure !== "kaplan_meier") throw new Error("wrong figure");
    expect(d.arms).toEqual(["Active", "Placebo"]);
    for (const arm of d.arms) {
      const ours = d.rows.filter((row) => row.arm === arm);
      const theirs = R.survival.find((s) => s.level === arm && s.stratum === null)!;
      expect(ours[0]).toMatchObject({ time: 0, estimate: 1 });
      const steps = ours.slice(1);
      expect(steps.map((s) => s.time)).toEqual(theirs.time);
      expect(steps.map((s) => s.atRisk)).toEqual(theirs.atRisk);
      steps.forEach((s, k) => {
        expectClose(s.estimate, theirs.estimate[k], TOL, `${arm} S(${s.time})`);
        expectClose(s.lower, theirs.lower[k], TOL, `${arm} lower(${s.time})`);
        expectClose(s.upper, theirs.upper[k], TOL, `${arm} upper(${s.time})`);
      });
    }
    expect(d.atRisk.filter((a) => a.time === 0).map((a) => a.atRisk)).toEqual(
      d.arms.map((arm) => R.survival.find((s) => s.level === arm && s.stratum === null)!.atRisk[0]),
    );
    expect(d.logRank?.stratified).toBe(true);
  });

  it("draws the residual figures of each coefficient and covariate", async () => {
    const table = rerunTable(doc, (await loadLockedTable(tteVersionId)).table);
    const sch = figureData(doc, "schoenfeld", { term: "TRTP: Active", withSubjectIds: false });
    if (sch.figure !== "schoenfeld") throw new Error("wrong figure");
    expect(sch.rows.length).toBe(doc.result.kind === "cox" ? doc.result.fit.events : -1);
    expect(sch.rows.every((r) => r.subject === null)).toBe(true);
    const mart = figureData(doc, "martingale_covariate", { term: "AGE", withSubjectIds: true, table });
    if (mart.figure !== "martingale_covariate") throw new Error("wrong figure");
    expect(mart.rows.length).toBe(doc.result.n);
    expect(mart.smooth.length).toBeGreaterThan(10);
    // every continuous covariate carries its own test of an added square, not only the worst one
    for (const term of ["AGE", "BASE"]) {
      const m = figureData(doc, "martingale_covariate", { term, withSubjectIds: false, table });
      if (m.figure !== "martingale_covariate") throw new Error("wrong figure");
      expect(m.test?.statistic, term).toBeGreaterThanOrEqual(0);
    }
    const lml = figureData(doc, "log_minus_log", { withSubjectIds: false });
    expect(lml.rows.length).toBeGreaterThan(10);
    const infl = figureData(doc, "cox_influence", { withSubjectIds: false });
    if (infl.figure !== "cox_influence") throw new Error("wrong figure");
    expect(infl.coefficients).toEqual(["TRTP: Active"]);
    expect(() => figureData(doc, "qq", { withSubjectIds: false })).toThrow(/Cox model/);
  });

  it("compiles every Cox figure with a title stating the question and the healthy picture, axes with units", async () => {
    if (doc.result.kind !== "cox") throw new Error("not a Cox result");
    const table = rerunTable(doc, (await loadLockedTable(tteVersionId)).table);
    const list = coxFigureList(doc.result);
    expect(list.map((f) => f.figure)).toEqual([
      "kaplan_meier",
      "log_minus_log",
      ...doc.result.coefficients.map(() => "schoenfeld"),
      "martingale_covariate",
      "martingale_covariate",
      "cox_influence",
    ]);
    for (const f of list) {
      const spec = figureSpec(figureData(doc, f.figure, { term: f.term, withSubjectIds: false, table }), {
        forPrint: true,
      });
      const t = expectWellFormedFigure(spec);
      expect(t.text).toMatch(/\?/);
      expect(() => toVega(spec)).not.toThrow();
    }
  });

  it("after assessment and a second biostatistician's signature, the appendix carries the Cox tables, checks and figures without subject ids", async () => {
    for (const f of await findings.findingsOf(rerunId)) {
      await findings.assessFinding(priya, studyId, f.id, {
        category: "model_assumption",
        impact: "none",
        action: "none",
        rationale: "Judged on the figure; the treatment conclusion is unchanged.",
      });
    }
    await findings.signRerun({ ...tomas, signedInAt: new Date().toISOString() }, studyId, rerunId);
    const content = await buildAppendixContent(studyId, { kind: "rerun", rerunId });
    const blocks = content.sections.flatMap((x) => x.blocks);
    const table = (key: string) => blocks.find((b) => b.kind === "table" && b.key === key);
    const coefficients = table(`coefficients:${rerunId}`);
    if (coefficients?.kind !== "table") throw new Error("no coefficient table");
    expect(coefficients.columns.map((c) => c.label)).toContain("Hazard ratio");
    expect(coefficients.rows[0][0]).toBe("TRTP: Active");
    expect(Number(coefficients.rows[0][5])).toBeCloseTo(R.coefficients[0].ratio, 3);
    const tests = table(`cox-tests:${rerunId}`);
    if (tests?.kind !== "table") throw new Error("no tests table");
    expect(tests.rows.map((r) => r[0])).toContain("Proportional hazards: global");
    const checks = table(`checks:${rerunId}`);
    if (checks?.kind !== "table") throw new Error("no checks table");
    expect(checks.rows.map((r) => r[0])).toEqual(doc.checks.map((c) => c.label));
    const figures = blocks
      .filter((b) => b.kind === "figure")
      .map((b) => (b.kind === "figure" ? b.key.split(":")[0] : ""));
    expect(figures).toEqual(
      expect.arrayContaining([
        "kaplan_meier",
        "log_minus_log",
        "schoenfeld",
        "martingale_covariate",
        "cox_influence",
      ]),
    );
    const methods = content.sections
      .find((x) => x.key === "methods")!
      .blocks.map((b) => (b.kind === "paragraph" ? b.text : ""))
      .join(" ");
    expect(methods).toMatch(/Cox proportional hazards model .*Breslow's method .*stratified by STRAT1/);
    expect(JSON.stringify(content)).not.toMatch(/INV-\d{4}/);
  });

  it("the signed rerun's sponsor report carries hazard ratios and the proportional-hazards test, naming subjects by rank only", async () => {
    const report = await getReport(studyId, rerunId);
    expect(report.results.cox?.ratios[0].name).toBe("TRTP: Active");
    expect(report.results.cox?.proportionalHazards.rows.at(-1)?.term).toBe("Global");
    expect(JSON.stringify(report)).not.toMatch(/INV-\d{4}/);
    expect(report.caution).toMatch(/do not replace/);
  });
});

describe("the Cox model's planned sensitivity analyses", () => {
  // R's coxph on the same invented data (tests/reference/survival/sensitivity/trial-breslow-cluster.json,
  // written by tests/reference/survival/generate-sensitivity.R)
  const S = coxSensitivityReference();
  let primaryId = "";
  let modelId = "";
  const sensitivityForm = () => {
    const f = coxForm();
    f.set("sensitivity:cox_robust_subject", "on");
    f.set("sensitivity:cox_unstratified", "on");
    f.set("sensitivity:cox_rmst", "on");
    f.set("sensitivity:tau", String(S.rmst.tau));
    return f;
  };

  beforeAll(async () => {
    const created = await plans.createPlan(priya, studyId, {
      title: "Time-to-event sensitivity",
      sapName: "SAP",
      sapVersion: "1.1",
      sapDate: "2026-10-02",
    });
    const v = validatePlannedModel(readPlannedModelForm(sensitivityForm()), await lockedColumns(), []);
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    expect(v.model.sensitivity.map((s) => s.kind)).toEqual([
      "cox_robust_subject",
      "cox_unstratified",
      "cox_rmst",
    ]);
    expect(v.model.sensitivity[2].tau).toBe(S.rmst.tau);
    modelId = await plans.savePlannedModel(priya, studyId, created.versionId, 1, null, v.model);
    await plans.submitForApproval(priya, studyId, created.versionId, 2);
    await plans.approvePlanVersion(
      { ...tomas, signedInAt: new Date().toISOString() },
      studyId,
      created.versionId,
    );
    primaryId = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId: tteVersionId,
      options: { variant: "planned" },
    });
    await drain();
  });

  async function runVariant(
    options:
      | { variant: "cox_robust_subject" }
      | { variant: "cox_unstratified" }
      | { variant: "cox_rmst"; tau: number },
  ) {
    const id = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId: tteVersionId,
      options,
      parentRerunId: primaryId,
      prespecified: true,
    });
    await drain();
    const got = await reruns.getRerun(studyId, id);
    expect(got.rerun.status, got.rerun.failureReason ?? "").toBe("completed");
    if (got.doc?.result.kind !== "cox") throw new Error("not a Cox result");
    return { id, doc: got.doc, result: got.doc.result };
  }

  it("refuses them for a model that is not time-to-event, and the unstratified one for a model without strata", async () => {
    const noStrata = sensitivityForm();
    noStrata.delete("stratum");
    const r1 = validatePlannedModel(readPlannedModelForm(noStrata), await lockedColumns(), []);
    expect(r1.ok).toBe(false);
    if (!r1.ok) expect(r1.errors["sensitivity:cox_unstratified"]).toMatch(/no strata/);
    const noId = sensitivityForm();
    noId.set("id", "");
    const r2 = validatePlannedModel(readPlannedModelForm(noId), await lockedColumns(), []);
    expect(r2.ok).toBe(false);
    if (!r2.ok) expect(r2.errors["sensitivity:cox_robust_subject"]).toMatch(/subject identifier column/);
    const linear = sensitivityForm();
    linear.set("family", "gaussian");
    linear.set("response", "BASE");
    linear.delete("covariate");
    linear.append("covariate", "AGE");
    const r3 = validatePlannedModel(readPlannedModelForm(linear), await lockedColumns(), []);
    expect(r3.ok).toBe(false);
    if (!r3.ok) expect(r3.errors["sensitivity:cox_robust_subject"]).toMatch(/time-to-event \(Cox\) model/);
    const farHorizon = sensitivityForm();
    farHorizon.set("sensitivity:tau", "5000");
    const r4 = validatePlannedModel(readPlannedModelForm(farHorizon), await lockedColumns(), []);
    expect(r4.ok).toBe(false);
    if (!r4.ok)
      expect(r4.errors["sensitivity:tau"]).toMatch(
        /τ = 5000 is beyond the longest follow-up time in adtte \(392\)/,
      );
    const noHorizon = sensitivityForm();
    noHorizon.set("sensitivity:tau", "");
    const r5 = validatePlannedModel(readPlannedModelForm(noHorizon), await lockedColumns(), []);
    expect(r5.ok).toBe(false);
    if (!r5.ok) expect(r5.errors["sensitivity:tau"]).toMatch(/Give the horizon τ/);
    // a changed horizon is a plan change a reviewer reads
    const a = validatePlannedModel(readPlannedModelForm(sensitivityForm()), await lockedColumns(), []);
    const shorter = sensitivityForm();
    shorter.set("sensitivity:tau", "120");
    const b = validatePlannedModel(readPlannedModelForm(shorter), await lockedColumns(), []);
    if (!a.ok || !b.ok) throw new Error("valid forms refused");
    const header = { title: "T", sapName: null, sapVersion: null, sapDate: null };
    expect(
      comparePlanVersions({ header, models: [a.model] }, { header, models: [b.model] }).map((c) => c.what),
    ).toEqual([`Restricted mean survival time difference between arms: horizon τ ${S.rmst.tau} → 120`]);
  });

  it("robust errors clustered by subject: the treatment's robust SE of R's coxph(..., cluster = USUBJID), same estimate", async () => {
    const { doc, result } = await runVariant({ variant: "cox_robust_subject" });
    expect(result.robust).toBe(true);
    const trt = result.coefficients[0];
    expect(trt.name).toBe("TRTP: Active");
    expectClose(trt.estimate, S.robustSubject.estimate, TOL, "log hazard ratio");
    expectClose(trt.robustSe!, S.robustSubject.se, TOL, "robust SE (R coxph cluster = USUBJID)");
    expectClose(trt.se, S.robustSubject.naiveSe, TOL, "model-based SE");
    expectClose(result.ratios[0].lower, S.robustSubject.ratioLower, TOL, "hazard ratio lower limit (robust)");
    expectClose(result.ratios[0].upper, S.robustSubject.ratioUpper, TOL, "hazard ratio upper limit (robust)");
    expect(doc.description).toBe("Robust (sandwich) standard errors, clustered by subject");
    // the view a reader without dataset.rows gets names no subject
    const reader = rerunView(doc, redaction(false, [doc]));
    expect(reader.caution).toMatch(/do not replace/);
    expect(reader.method).toMatch(/robust \(sandwich\)/);
    expect(JSON.stringify(reader)).not.toMatch(/INV-\d{4}/);
  });

  it("unstratified: the estimates of R's coxph without strata(), compared with the primary as hazard ratios", async () => {
    const { result } = await runVariant({ variant: "cox_unstratified" });
    expect(result.strata).toEqual([]);
    const trt = result.coefficients[0];
    expectClose(trt.estimate, S.unstratified.estimate, TOL, "log hazard ratio without strata");
    expectClose(trt.se, S.unstratified.se, TOL, "SE without strata");
    expectClose(result.ratios[0].ratio, S.unstratified.ratio, TOL, "hazard ratio without strata");
    const children = (await reruns.sensitivityReruns(primaryId)).slice(0, 2);
    expect(children.map((c) => c.label)).toEqual([
      "Robust (sandwich) standard errors, clustered by subject",
      "Unstratified (one baseline hazard for all subjects)",
    ]);
    const contrasts = await Promise.all(
      children.map(async (c) => {
        const d = await reruns.storedRerunDocument(c);
        if (!d) throw new Error(`${c.label} has no result`);
        return reportedContrasts(d);
      }),
    );
    expect(contrasts.map((c) => c[0].label)).toEqual([
      "TRTP: Active (hazard ratio)",
      "TRTP: Active (hazard ratio)",
    ]);
    expectClose(
      contrasts[0][0].upper,
      S.robustSubject.ratioUpper,
      TOL,
      "compared interval of the robust analysis",
    );
    expectClose(
      contrasts[1][0].estimate,
      S.unstratified.ratio,
      TOL,
      "compared hazard ratio of the unstratified analysis",
    );
    const spec = JSON.stringify(
      forestSpec(
        contrasts.map((c, i) => ({
          label: children[i].label ?? "",
          estimate: c[0].estimate,
          lower: c[0].lower,
          upper: c[0].upper,
          prespecified: true,
          primary: false,
        })),
        contrasts[0][0].label,
      ),
    );
    expect(spec).toMatch(/"type":"log"/);
    expect(spec).toMatch(/same side of 1/);
  });

  it("restricted mean survival time to τ: each arm's area and SE of R's survfit rmean, compared as a difference", async () => {
    const { doc } = await runVariant({ variant: "cox_rmst", tau: S.rmst.tau });
    const rm = doc.restrictedMean;
    if (!rm) throw new Error("no restricted mean");
    expect(rm.map((d) => `${d.level} vs ${d.reference}`)).toEqual(["Active vs Placebo"]);
    const active = S.rmst.arms.find((a) => a.level === "Active")!;
    const placebo = S.rmst.arms.find((a) => a.level === "Placebo")!;
    expectClose(rm[0].arm.mean, active.rmean, TOL, "Active restricted mean (R survfit rmean)");
    expectClose(rm[0].arm.se, active.se, TOL, "Active SE of the restricted mean");
    expectClose(rm[0].referenceArm.mean, placebo.rmean, TOL, "Placebo restricted mean");
    expectClose(rm[0].referenceArm.se, placebo.se, TOL, "Placebo SE of the restricted mean");
    expectClose(rm[0].se, Math.hypot(active.se, placebo.se), TOL, "SE of the difference");
    const [c] = reportedContrasts(doc);
    expect(c.label).toBe(`Active vs Placebo (restricted mean survival difference to τ = ${S.rmst.tau})`);
    expectClose(c.estimate, active.rmean - placebo.rmean, TOL, "compared difference");
    const reader = rerunView(doc, redaction(false, [doc]));
    if (reader.kind !== "cox") throw new Error("not a Cox view");
    expect(reader.restrictedMean?.[0].difference).toBe(rm[0].difference);
    expect(reader.caution).toMatch(/do not replace/);
    expect(JSON.stringify(reader)).not.toMatch(/INV-\d{4}/);
  });
});
