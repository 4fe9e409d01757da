/**
 * A repeated-measures (MMRM) model rerun through the services on a real SQLite file: the invented
 * three-arm trial with dropout (tests/fixtures/mmrm-trial.csv, written by
 * tests/reference/repeated/generate.R) uploaded and locked, a plan with an unstructured MMRM
 * approved (made through the plan services with a specification object), the rerun run as a
 * background job through the compute path, its checks and findings, the plan's sensitivity
 * analyses queued with it (another covariance structure; the exclusion of influential subjects
 * with all their records), and analyses that do not apply refused. Estimates are compared with
 * R's nlme::gls and emmeans on the same data (tests/reference/repeated/values/trial-unstructured-reml.json
 * and trial-toeplitz-reml.json, settled by direct computation as generate.R says), at the 1e-5
 * of tests/reference/repeated-reference.test.ts.
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { expectClose } from "../reference/compare";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const datasets = await import("~/.server/datasets/datasets.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { redaction } = await import("~/.server/redaction.server");
const { whatIfInputs, exclusionProblem } = await import("~/.server/reruns/what-if.server");
const { optionsFor } = await import("~/.server/reruns/planned-sensitivity");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { actorOf } = await import("~/.server/people.server");
const { CHECK_BY_KEY, defaultChecks } = await import("~/engine/checks");
const { plannedModelSchema } = await import("~/.server/plans/planned-model");
const { eq } = await import("drizzle-orm");

const ROOT = join(import.meta.dirname, "..", "reference", "repeated");
const TOL = 1e-5;
const DF_TOL = 1e-4;

interface RCase {
  source: string;
  coefficients: { name: string; estimate: number; se: number }[];
  logLik: number;
  contrasts: { label: string; visit: string; estimate: number; se: number; df: number }[];
}
const reference = (name: string) =>
  JSON.parse(readFileSync(join(ROOT, "values", `${name}.json`), "utf8")) as RCase;
const UN = reference("trial-unstructured-reml");
const TOEP = reference("trial-toeplitz-reml");

const REPEATED_CHECK_KEYS = [
  "repeated_convergence",
  "repeated_normality",
  "repeated_spread",
  "repeated_influence",
  "repeated_primary_visit",
];

let studyId = "";
let versionId = "";
let modelId = "";
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

/** The plan's MMRM as the plan services store it: the reference model of generate.R, with a fallback, published values and two sensitivity analyses. */
function plannedMmrm() {
  const checks = defaultChecks(true, "repeated").map((c) =>
    // the plan's own number: 3/m, so that some subjects of the invented trial are flagged
    c.key === "repeated_influence" ? { ...c, threshold: 3 } : c,
  );
  return plannedModelSchema.parse({
    key: "chg-mmrm",
    title: "Change from baseline by visit (MMRM)",
    datasetName: "adqs",
    spec: {
      family: "gaussian",
      response: "CHG",
      terms: [
        { variable: "ARM", reference: "Placebo" },
        { variable: "AVISIT" },
        { variable: "BASE" },
        { interaction: ["ARM", "AVISIT"] },
        { interaction: ["BASE", "AVISIT"] },
      ],
      treatment: "ARM",
      // R's estimates printed to two decimals: the Dose 20 mg contrast at Week 16, and the ARM coefficient (Week 12, the reference visit)
      published: [
        {
          quantity: "contrast",
          level: "Dose 20 mg",
          statistic: "estimate",
          value: "-5.22",
        },
        {
          quantity: "coefficient",
          term: [{ variable: "ARM", level: "Dose 20 mg" }],
          statistic: "estimate",
          value: "-2.70",
        },
      ],
      repeated: {
        subject: "USUBJID",
        visit: "AVISIT",
        visitOrder: "AVISITN",
        covariance: "unstructured",
        fallback: ["toeplitz"],
        df: "satterthwaite",
        method: "reml",
        primaryVisit: "Week 16",
      },
    },
    checks,
    sensitivity: [{ kind: "repeated_structure", structure: "toeplitz" }, { kind: "exclude_influential" }],
  });
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
    datasetName: "adqs",
    fileName: "adqs.csv",
    bytes: readFileSync(join(import.meta.dirname, "..", "fixtures", "mmrm-trial.csv"), "utf8"),
  });
  if (!up.ok) throw new Error(up.problems.join(" "));
  const detail = await datasets.getVersionDetail(studyId, up.versionId);
  for (const hit of detail?.hits ?? []) {
    const done = await datasets.recordNotIdentifier(
      dana,
      studyId,
      hit.id,
      "Invented subject codes of generated test data.",
    );
    if (!done.ok) throw new Error(done.message);
  }
  const locked = await datasets.lockVersion(
    { ...dana, signedInAt: new Date().toISOString() },
    studyId,
    up.versionId,
  );
  if (!locked.ok) throw new Error(locked.message);
  versionId = up.versionId;

  const created = await plans.createPlan(priya, studyId, {
    title: "Repeated-measures models",
    sapName: "SAP",
    sapVersion: "1.0",
    sapDate: "2026-10-01",
  });
  modelId = await plans.savePlannedModel(priya, studyId, created.versionId, 1, null, plannedMmrm());
  await plans.submitForApproval(priya, studyId, created.versionId, 2);
  await plans.approvePlanVersion(
    { ...tomas, signedInAt: new Date().toISOString() },
    studyId,
    created.versionId,
  );
});

describe("rerunning an MMRM with its planned sensitivity analyses", () => {
  let primaryId = "";
  let doc: NonNullable<Awaited<ReturnType<typeof reruns.getRerun>>["doc"]>;

  beforeAll(async () => {
    primaryId = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId: versionId,
      options: { variant: "planned" },
    });
    await drain();
    const got = await reruns.getRerun(studyId, primaryId);
    expect(got.rerun.status, got.rerun.failureReason ?? "").toBe("completed");
    doc = got.doc!;
  });

  it(`stores the estimates of R's nlme::gls and emmeans (${UN.source})`, () => {
    const r = doc.result;
    if (r.kind !== "repeated") throw new Error("not a repeated-measures result");
    expect(r.covariance.structure).toBe("unstructured");
    expect(r.n).toBe(523);
    expect(r.subjectCount).toBe(120);
    expectClose(r.covariance.logLik, UN.logLik, TOL, "logLik");
    expect(r.coefficients.length).toBe(UN.coefficients.length);
    const scale = Math.max(...UN.coefficients.map((c) => Math.abs(c.estimate)));
    UN.coefficients.forEach((c, j) => {
      expectClose(r.coefficients[j].estimate, c.estimate, TOL, `${c.name} estimate`, scale * 1e-4);
      expectClose(r.coefficients[j].se, c.se, TOL, `${c.name} SE`);
    });
    for (const c of UN.contrasts) {
      const label = c.label.replace(" - ", " vs ");
      const ours = r.adjustedMeans?.contrasts.find((x) => x.label === label && x.visit === c.visit);
      expectClose(ours?.estimate, c.estimate, TOL, `contrast ${label} ${c.visit}`, 1e-3);
      expectClose(ours?.se, c.se, TOL, `contrast SE ${label} ${c.visit}`);
      expectClose(ours?.df, c.df, DF_TOL, `contrast df ${label} ${c.visit}`);
    }
    expect(doc.rows).toEqual({
      inFile: 523,
      outsidePopulation: 0,
      excludedByOption: 0,
      missingCells: 0,
      used: 523,
    });
  });

  it("reproduces the published values at the primary visit", () => {
    expect(doc.reproduction?.outcome).toBe("reproduced");
    expect(doc.reproduction?.values.map((v) => v.quantity)).toEqual([
      "Dose 20 mg vs Placebo at Week 16, estimate",
      "coefficient ARM: Dose 20 mg, estimate",
    ]);
  });

  it("ends every planned check with its catalogue source, and stores the findings for assessment", async () => {
    expect(doc.checks.map((c) => c.key)).toEqual(REPEATED_CHECK_KEYS);
    for (const c of doc.checks) {
      expect(["within", "finding"]).toContain(c.outcome);
      expect(CHECK_BY_KEY.get(c.key)?.source, c.key).toMatch(/\w/);
      expect(c.numbers?.measure, c.key).toMatch(/\w/);
    }
    const influence = doc.checks.find((c) => c.key === "repeated_influence")!;
    expect(influence.threshold).toBe("3/m = 3/120 = 0.0250");
    expect(influence.outcome).toBe("finding");
    expect(influence.flagged!.length).toBeGreaterThan(0);
    const visit = doc.checks.find((c) => c.key === "repeated_primary_visit")!;
    // 29 of the 40 subjects of Dose 10 mg have a record at Week 16 (the fixture's dropout)
    expect(visit).toMatchObject({ outcome: "finding", value: 0.725 });
    const stored = await db.select().from(t.findings).where(eq(t.findings.rerunId, primaryId));
    expect(stored.map((f) => f.checkKey).sort()).toEqual(
      doc.checks
        .filter((c) => c.outcome === "finding")
        .map((c) => c.key)
        .sort(),
    );
  });

  it("names flagged subjects only for roles that see rows", () => {
    const influence = doc.checks.find((c) => c.key === "repeated_influence")!;
    const first = influence.flagged![0];
    const staff = redaction(true, [doc]);
    const reader = redaction(false, [doc]);
    expect(staff.flagged(influence)[0].who).toBe(first.id);
    expect(reader.flagged(influence)[0].who).toBe("subject ranked 1");
    const texts = doc.checks.map((c) => ({
      statistic: reader.text(c.statistic, c.key),
      summary: reader.text(c.summary, c.key),
    }));
    expect(() => reader.assertClean(texts, "The repeated checks")).not.toThrow();
    expect(JSON.stringify(texts)).not.toContain(first.id!);
    expect(texts.find((_, i) => doc.checks[i].key === "repeated_influence")?.summary).toMatch(
      /the most extreme is the subject ranked 1/,
    );
  });

  it("queues and completes another covariance structure, as R's Toeplitz fit", async () => {
    const children = await reruns.sensitivityReruns(primaryId);
    const toeplitz = children.find((c) => c.sensitivityKey === "repeated_structure")!;
    expect(toeplitz.prespecified).toBe(true);
    expect(toeplitz.label).toBe("Another covariance structure of the visits: Toeplitz");
    const got = await reruns.getRerun(studyId, toeplitz.id);
    expect(got.rerun.status, got.rerun.failureReason ?? "").toBe("completed");
    const r = got.doc!.result;
    if (r.kind !== "repeated") throw new Error("not a repeated-measures result");
    expect(r.covariance).toMatchObject({ structure: "toeplitz", planned: "toeplitz" });
    expectClose(r.covariance.logLik, TOEP.logLik, TOL, "Toeplitz logLik");
    const scale = Math.max(...TOEP.coefficients.map((c) => Math.abs(c.estimate)));
    TOEP.coefficients.forEach((c, j) => {
      expectClose(r.coefficients[j].estimate, c.estimate, TOL, `${c.name} estimate`, scale * 1e-4);
      expectClose(r.coefficients[j].se, c.se, TOL, `${c.name} SE`);
    });
    // a sensitivity analysis is not compared with the published values
    expect(got.doc!.reproduction).toBeUndefined();
  });

  it("queues and completes the exclusion of every record of each flagged subject", async () => {
    const influence = doc.checks.find((c) => c.key === "repeated_influence")!;
    const flaggedIds = influence.flagged!.map((f) => f.id!);
    const r0 = doc.result;
    if (r0.kind !== "repeated") throw new Error("not a repeated-measures result");
    const theirRows = r0.observations.row
      .filter((_, i) => flaggedIds.includes(r0.observations.id[i]))
      .sort((a, b) => a - b);
    expect(theirRows.length).toBeGreaterThan(flaggedIds.length);

    const children = await reruns.sensitivityReruns(primaryId);
    const exclusion = children.find((c) => c.sensitivityKey === "exclude_rows")!;
    const n = flaggedIds.length;
    expect(exclusion.label).toBe(
      `Excluding ${n} subject${n === 1 ? "" : "s"}, ${theirRows.length} records (flagged by the subject influence check)`,
    );
    const got = await reruns.getRerun(studyId, exclusion.id);
    expect(got.rerun.status, got.rerun.failureReason ?? "").toBe("completed");
    const d = got.doc!;
    expect(d.options).toEqual({
      variant: "exclude_rows",
      rows: theirRows,
      subjects: n,
      reason: "flagged by the subject influence check",
    });
    expect(d.rows.excludedByOption).toBe(theirRows.length);
    const r = d.result;
    if (r.kind !== "repeated") throw new Error("not a repeated-measures result");
    expect(r.subjectCount).toBe(120 - n);
    expect(r.n).toBe(523 - theirRows.length);
    expect(r.observations.id.some((id) => flaggedIds.includes(id))).toBe(false);
  });

  it("runs another structure only when the plan names one", () => {
    expect(optionsFor({ kind: "repeated_structure" }, doc)).toBeNull();
    expect(optionsFor({ kind: "repeated_structure", structure: "ar1" }, doc)).toEqual({
      variant: "repeated_structure",
      structure: "ar1",
    });
  });

  it("refuses an exclusion of part of a subject's records, and the closed-form what-if", () => {
    const influence = doc.checks.find((c) => c.key === "repeated_influence")!;
    const rows = influence.flagged![0].rows!;
    expect(exclusionProblem(doc, rows.slice(1), 1)).toMatch(/left out with all of its records/);
    expect(exclusionProblem(doc, rows, 2)).toMatch(/records of 1 subject, not 2/);
    expect(exclusionProblem(doc, rows)).toMatch(/rows chosen one by one do not apply/);
    expect(exclusionProblem(doc, rows, 1)).toBeNull();
    const w = whatIfInputs(doc, { columns: {}, rowNumbers: [] });
    expect(w.available).toBe(false);
    if (!w.available) expect(w.reason).toMatch(/repeated-measures \(MMRM\) model/);
  });

  it("refits an alternative covariate set keeping the visit and the treatment-by-visit term", async () => {
    const id = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId: versionId,
      options: { variant: "alternative_covariates", covariates: [], label: "Unadjusted" },
      parentRerunId: primaryId,
    });
    await drain();
    const got = await reruns.getRerun(studyId, id);
    expect(got.rerun.status, got.rerun.failureReason ?? "").toBe("completed");
    const r = got.doc!.result;
    if (r.kind !== "repeated") throw new Error("not a repeated-measures result");
    expect(r.spec.terms).toEqual([
      { variable: "ARM", reference: "Placebo" },
      { variable: "AVISIT" },
      { interaction: ["ARM", "AVISIT"] },
    ]);
    expect(r.n).toBe(523);
  });

  it("keeps an analysis that does not apply to an MMRM as a failed rerun saying why", async () => {
    const id = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId: versionId,
      options: { variant: "robust_hc3" },
      parentRerunId: primaryId,
    });
    await drain();
    const got = await reruns.getRerun(studyId, id);
    expect(got.rerun.status).toBe("failed");
    expect(got.rerun.failureReason).toMatch(
      /robust \(hc3\) standard errors analysis does not apply to a repeated-measures \(MMRM\) model/,
    );
  });

  it("stores the same bytes when rerun with the same inputs", async () => {
    const got = await reruns.getRerun(studyId, primaryId);
    const again = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId: versionId,
      options: { variant: "planned" },
    });
    await drain();
    const twin = await reruns.getRerun(studyId, again);
    expect(twin.rerun.resultSha256).toBe(got.rerun.resultSha256);
  });
});
