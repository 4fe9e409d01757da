/**
 * The biostatistician's audit from plan to signature, through the services on a real SQLite
 * file with the seeded demo study: plan, two-person approval, rerun as a background job,
 * checks and findings, determinism, sensitivity analysis, assessment and sign-off.
 * Treatment estimates are compared with R's lm on the same data (tests/demo/demo-findings.json,
 * written by tests/demo/check-demo.R: R 4.2 stats::lm, lmtest::bptest, car::leveneTest).
 */
import { demoPrimaryForm } from "../support/demo-forms";
import { readFileSync } from "node:fs";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
const reruns = await import("~/.server/reruns/reruns.server");
const { storedResultJson } = await import("~/.server/reruns/result-store.server");
const findings = await import("~/.server/reruns/findings.server");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();
const { verifyAuditChain } = await import("~/.server/audit.server");
const { eq, inArray } = await import("drizzle-orm");

const R = JSON.parse(readFileSync("tests/demo/demo-findings.json", "utf8")) as {
  flares: {
    n: number;
    poissonPearsonChi2PerDf: number;
    negativeBinomialTheta: number;
    highVsPlaceboRateRatio: number;
  };
  responder: { n: number; events: number; eventsPerVariable: number };
  ancova: {
    n: number;
    highVsPlacebo: { estimate: number; p: number };
    lowVsPlacebo: { estimate: number; p: number };
    breuschPaganModelP: number;
    brownForsytheArmP: number;
    shapiroWilkP: number;
    cooksMax: { subjid: string; cooksD: number };
  };
};

type Actor = { id: string; name: string };
let studyId = "";
let priya: Actor;
let tomas: Actor;
let versionId = "";
let modelId = "";
let datasetVersionId = "";

async function person(email: string): Promise<Actor> {
  const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
  return { id: p.id, name: p.displayName };
}

async function drain(): Promise<void> {
  while (await runOneJob()) {
    // run every queued job
  }
}

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  priya = await person("priya.lindqvist@plumbline.example");
  tomas = await person("tomas.berg@plumbline.example");
  datasetVersionId = (await listLockedVersions(studyId))[0].versionId;
});

describe("analysis plan", () => {
  it("validates a planned model against the dataset's columns, naming the field", async () => {
    const locked = await listLockedVersions(studyId);
    const datasets = locked.map((v) => ({ name: v.datasetName, columns: v.columns }));
    const bad = demoPrimaryForm();
    bad.set("treatmentReference", "Active");
    bad.set("response", "arm");
    bad.append("covariate", "nosuchcolumn");
    const result = validatePlannedModel(readPlannedModelForm(bad), datasets, []);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors.treatmentReference).toMatch(/"Active" is not an arm of arm; the arms are .*Placebo/);
    expect(result.errors.response).toMatch(/arm is text, not numeric/);
    expect(result.errors["covariate:nosuchcolumn"]).toMatch(/Column "nosuchcolumn" is not in adeff/);
  });

  it("is written by one biostatistician and approved only by another", async () => {
    const created = await plans.createPlan(priya, studyId, {
      title: "Efficacy models",
      sapName: "Statistical analysis plan",
      sapVersion: "2.0",
      sapDate: "2026-10-01",
    });
    versionId = created.versionId;
    const locked = await listLockedVersions(studyId);
    const v = validatePlannedModel(
      readPlannedModelForm(demoPrimaryForm()),
      locked.map((x) => ({ name: x.datasetName, columns: x.columns })),
      [],
    );
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    modelId = await plans.savePlannedModel(priya, studyId, versionId, 1, null, v.model);
    // A second editor working from the old revision is refused, not silently overwritten.
    await expect(
      plans.savePlannedModel(tomas, studyId, versionId, 1, modelId, { ...v.model, title: "Overwritten" }),
    ).rejects.toThrow(/Someone else saved this plan version/);
    await plans.submitForApproval(priya, studyId, versionId, 2);
    await expect(
      plans.approvePlanVersion({ ...priya, signedInAt: new Date().toISOString() }, studyId, versionId),
    ).rejects.toThrow(/two-person rule/);
    await plans.approvePlanVersion({ ...tomas, signedInAt: new Date().toISOString() }, studyId, versionId);
    const { version } = await plans.getPlanVersion(studyId, versionId);
    expect(version.status).toBe("approved");
    expect(version.approvedBy).toBe(tomas.id);
    await expect(
      plans.savePlannedModel(priya, studyId, versionId, version.revision, modelId, v.model),
    ).rejects.toThrow();
  });
});

describe("rerun of the primary model", () => {
  let rerunId = "";
  let doc: import("~/.server/reruns/reruns.server").RerunDocument;

  beforeAll(async () => {
    rerunId = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const r = await reruns.getRerun(studyId, rerunId);
    expect(r.rerun.status).toBe("completed");
    doc = r.doc!;
  });

  it("uses the population's complete cases and matches R's lm treatment contrasts (relative 1e-5 of R's six printed digits)", () => {
    expect(doc.rows.used).toBe(R.ancova.n);
    if (doc.result.kind !== "linear") throw new Error("expected a linear model");
    const high = doc.result.contrasts!.find((c) => c.label.startsWith("Lorvanitide 120 mg"))!;
    const low = doc.result.contrasts!.find((c) => c.label.startsWith("Lorvanitide 40 mg"))!;
    expect(high.estimate).toBeCloseTo(R.ancova.highVsPlacebo.estimate, 3);
    expect(low.estimate).toBeCloseTo(R.ancova.lowVsPlacebo.estimate, 3);
    expect(Math.abs(low.p / R.ancova.lowVsPlacebo.p - 1)).toBeLessThan(1e-4);
  });

  it("ends the planted checks as findings, with the planted influential subject first", () => {
    const by = new Map(doc.checks.map((c) => [c.key, c]));
    expect(by.get("breusch_pagan")?.outcome).toBe("finding");
    expect(by.get("brown_forsythe")?.outcome).toBe("finding");
    expect(by.get("shapiro_wilk")?.outcome).toBe("finding");
    expect(by.get("gvif")?.outcome).toBe("within");
    const cooks = by.get("cooks_distance")!;
    expect(cooks.outcome).toBe("finding");
    expect(cooks.flagged![0].id).toBe(R.ancova.cooksMax.subjid);
    expect(cooks.flagged![0].value).toBeCloseTo(R.ancova.cooksMax.cooksD, 5);
    expect(by.get("brown_forsythe")!.value! / R.ancova.brownForsytheArmP).toBeCloseTo(1, 3);
    expect(by.get("breusch_pagan")!.value! / R.ancova.breuschPaganModelP).toBeCloseTo(1, 3);
  });

  it("is deterministic: rerunning gives a byte-identical result and the same hash", async () => {
    const again = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const [a, b] = await Promise.all([reruns.getRerun(studyId, rerunId), reruns.getRerun(studyId, again)]);
    expect(b.rerun.resultSha256).toBe(a.rerun.resultSha256);
    const rows = await db
      .select({ id: t.reruns.id, resultSha256: t.reruns.resultSha256 })
      .from(t.reruns)
      .where(inArray(t.reruns.id, [rerunId, again]));
    expect(rows).toHaveLength(2);
    const stored = await Promise.all(rows.map((r) => storedResultJson(r)));
    expect(stored[0]).toBeTruthy();
    expect(stored[0]).toBe(stored[1]);
  });

  it("runs the planned exclusion of influential subjects beside the primary", async () => {
    const rows = doc.checks.find((c) => c.key === "cooks_distance")!.flagged!.map((f) => f.row);
    const id = await reruns.startRerun(priya, studyId, {
      plannedModelId: modelId,
      datasetVersionId,
      options: { variant: "exclude_rows", rows, reason: "flagged" },
      parentRerunId: rerunId,
    });
    await drain();
    const s = await reruns.getRerun(studyId, id);
    expect(s.rerun.status).toBe("completed");
    expect(s.doc!.rows.excludedByOption).toBe(rows.length);
    expect(s.doc!.rows.used).toBe(doc.rows.used - rows.length);
    expect((await reruns.sensitivityReruns(rerunId)).map((x) => x.id)).toContain(id);
  });

  it("is signed only after every finding is assessed, by someone who did not assess, with a fresh sign-in", async () => {
    const fresh = new Date().toISOString();
    expect((await findings.canSign({ id: tomas.id, signedInAt: fresh }, rerunId)).ok).toBe(false);
    for (const f of await findings.findingsOf(rerunId)) {
      await findings.assessFinding(priya, studyId, f.id, {
        category: "model_assumption",
        impact: "none",
        action: "planned_sensitivity",
        rationale: "The planned sensitivity analyses leave the treatment conclusion unchanged.",
      });
    }
    expect(await findings.canSign({ id: priya.id, signedInAt: fresh }, rerunId)).toMatchObject({
      ok: false,
      reason: expect.stringMatching(/two-person rule/),
    });
    const stale = new Date(Date.now() - 6 * 60 * 1000).toISOString();
    expect(await findings.canSign({ id: tomas.id, signedInAt: stale }, rerunId)).toMatchObject({
      ok: false,
      reauthenticate: true,
    });
    await findings.signRerun({ ...tomas, signedInAt: fresh }, studyId, rerunId);
    const r = await reruns.getRerun(studyId, rerunId);
    expect(r.rerun.signedAt).not.toBeNull();
    expect((await findings.signaturesOf(rerunId))[0]).toMatchObject({
      signerName: "Tomas Berg",
      meaning: "Reviewed and approved",
    });
    await expect(
      findings.recordDeviation(priya, studyId, rerunId, {
        category: "data",
        impact: "none",
        action: "none",
        rationale: "Too late to add anything now.",
      }),
    ).rejects.toThrow(/signed/);
    expect((await findings.deviationLog(studyId)).length).toBeGreaterThanOrEqual(4);
  });
});

describe("generalized linear planned models on the demo study", () => {
  // R 4.2 stats::glm and MASS::glm.nb on the same data (tests/demo/check-demo.R).
  let countsId = "";
  let responderId = "";

  beforeAll(async () => {
    const locked = await listLockedVersions(studyId);
    const catalogue = locked.map((x) => ({ name: x.datasetName, columns: x.columns }));
    const { versionId: v } = await plans.createPlan(priya, studyId, {
      title: "Secondary endpoints",
      sapName: "Statistical analysis plan",
      sapVersion: "2.0",
      sapDate: "2026-10-01",
    });
    const form = (fields: Record<string, string>, covariates: string[], sensitivity: string[]) => {
      const f = new FormData();
      for (const [k, val] of Object.entries({
        datasetName: "adeff",
        populationColumn: "fasfl",
        populationValue: "Y",
        treatment: "arm",
        treatmentReference: "Placebo",
        id: "subjid",
        ...fields,
      }))
        f.set(k, val);
      for (const c of covariates) f.append("covariate", c);
      for (const c of [
        "cooks_distance",
        "leverage",
        "overdispersion",
        "events_per_variable",
        "linearity_glm",
      ])
        f.set(`check:${c}:enabled`, "on");
      for (const k of sensitivity) f.set(`sensitivity:${k}`, "on");
      const parsed = validatePlannedModel(readPlannedModelForm(f), catalogue, []);
      if (!parsed.ok) throw new Error(JSON.stringify(parsed.errors));
      return parsed.model;
    };
    countsId = await plans.savePlannedModel(
      priya,
      studyId,
      v,
      1,
      null,
      form(
        { key: "flares", title: "Flare rate", response: "flares", family: "poisson", offset: "logexp" },
        ["stratum", "region"],
        ["negative_binomial", "quasi_poisson"],
      ),
    );
    responderId = await plans.savePlannedModel(
      priya,
      studyId,
      v,
      2,
      null,
      form(
        { key: "responder", title: "Responders at week 12", response: "resp", family: "binomial" },
        ["base", "stratum", "region", "sex", "age"],
        [],
      ),
    );
    await plans.submitForApproval(priya, studyId, v, 3);
    await plans.approvePlanVersion({ ...tomas, signedInAt: new Date().toISOString() }, studyId, v);
  });

  it("reports the planted overdispersion of the flare counts as a finding, at R's Pearson χ²/df", async () => {
    const id = await reruns.startRerun(priya, studyId, {
      plannedModelId: countsId,
      datasetVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const r = await reruns.getRerun(studyId, id);
    expect(r.rerun.status).toBe("completed");
    const od = r.doc!.checks.find((c) => c.key === "overdispersion")!;
    expect(od.outcome).toBe("finding");
    expect(od.value!).toBeCloseTo(R.flares.poissonPearsonChi2PerDf, 4);
    expect(od.numbers).toMatchObject({ compares: "statistic above", threshold: 1.5 });
    expect(od.numbers!.statistic!).toBeCloseTo(R.flares.poissonPearsonChi2PerDf, 4);
    // the deviation log and the findings say the check's label once
    const [stored] = (await findings.findingsOf(id)).filter((f) => f.checkKey === "overdispersion");
    expect(stored.summary).toMatch(/^Overdispersion: The counts vary about /);
    expect(stored.summary).not.toMatch(/Overdispersion: Overdispersion/);
    expect(r.doc!.rows.used).toBe(R.flares.n);
    // The planned negative binomial analysis, beside the primary: θ and the rate ratio as MASS::glm.nb finds them.
    const nbId = await reruns.startRerun(priya, studyId, {
      plannedModelId: countsId,
      datasetVersionId,
      options: { variant: "family", family: "negative-binomial" },
      parentRerunId: id,
    });
    await drain();
    const nb = (await reruns.getRerun(studyId, nbId)).doc!.result;
    if (nb.kind !== "glm") throw new Error("expected a GLM");
    expect(nb.fit.theta!).toBeCloseTo(R.flares.negativeBinomialTheta, 3);
    const high = nb.ratios!.find((x) => x.name === "arm: Lorvanitide 120 mg")!;
    expect(high.ratio).toBeCloseTo(R.flares.highVsPlaceboRateRatio, 4);
  });

  it("counts the responder events per variable as R does, within plan", async () => {
    const id = await reruns.startRerun(priya, studyId, {
      plannedModelId: responderId,
      datasetVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const r = await reruns.getRerun(studyId, id);
    expect(r.rerun.status).toBe("completed");
    const epv = r.doc!.checks.find((c) => c.key === "events_per_variable")!;
    expect(epv.outcome).toBe("within");
    expect(epv.value!).toBeCloseTo(R.responder.eventsPerVariable, 4);
    // overdispersion does not apply to a 0/1 response: the plan stores it as not planned, the rerun does not evaluate it
    expect(r.doc!.checks.find((c) => c.key === "overdispersion")).toBeUndefined();
    const rd = (await import("~/.server/reruns/rerun-view.server")).reportedContrasts(r.doc!);
    expect(rd.every((c) => c.label.endsWith("(risk difference)"))).toBe(true);
  });
});

describe("a planned model that cannot be estimated as planned", () => {
  it("is kept as a failed rerun with the engine's reason and a finding of that kind", async () => {
    const { version } = await plans.getPlanVersion(studyId, versionId);
    const next = await plans.startNextVersion(priya, studyId, version.id);
    const m = (await plans.getPlanVersion(studyId, next)).models[0];
    const broken = { ...m, spec: { ...m.spec, terms: [...m.spec.terms, { variable: "visit_week" }] } };
    const pv = await plans.getPlanVersion(studyId, next);
    await plans.savePlannedModel(priya, studyId, next, pv.version.revision, m.id, broken);
    await plans.submitForApproval(priya, studyId, next, pv.version.revision + 1);
    await plans.approvePlanVersion({ ...tomas, signedInAt: new Date().toISOString() }, studyId, next);
    const id = await reruns.startRerun(priya, studyId, {
      plannedModelId: m.id,
      datasetVersionId,
      options: { variant: "planned" },
    });
    await drain();
    const r = await reruns.getRerun(studyId, id);
    expect(r.rerun.status).toBe("failed");
    expect(r.rerun.failureReason).toMatch(/visit_week/);
    const fs = await findings.findingsOf(id);
    expect(fs).toHaveLength(1);
    expect(fs[0]).toMatchObject({
      kind: "not_estimable",
      summary: expect.stringMatching(/^Not estimable as planned: .*visit_week/),
    });
  });

  it("leaves an intact audit chain behind all of this", async () => {
    expect((await verifyAuditChain()).intact).toBe(true);
  });
});

describe("what a viewer without access to subjects reads", () => {
  it("names no subject in check texts", async () => {
    const { rerunView } = await import("~/.server/reruns/rerun-view.server");
    const { redaction } = await import("~/.server/redaction.server");
    const all = await reruns.listReruns(studyId);
    const primary = all.find(
      (r) => r.kind === "primary" && r.status === "completed" && r.modelKey === "primary",
    )!;
    const { doc } = await reruns.getRerun(studyId, primary.id);
    const hidden = JSON.stringify(rerunView(doc!, redaction(false, [doc])));
    expect(hidden).not.toMatch(/QMT301-\d{4}/);
    expect(JSON.stringify(rerunView(doc!, redaction(true, [doc])))).toContain("QMT301-0217");
  });
});

describe("finding texts for the deviation log", () => {
  it("name subjects by rank instead of by code for viewers without access to subjects", async () => {
    const { redactionForReruns } = await import("~/.server/redaction.server");
    const log = await findings.deviationLog(studyId);
    const redact = await redactionForReruns(
      false,
      log.flatMap((d) => (d.rerun ? [d.rerun.id] : [])),
    );
    const texts = log.flatMap((d) =>
      d.finding
        ? [
            { key: d.finding.checkKey, text: d.finding.summary },
            { key: d.finding.checkKey, text: d.finding.statistic ?? "" },
          ]
        : [],
    );
    expect(texts.some((t) => /QMT301-\d{4}/.test(t.text))).toBe(true);
    for (const t of texts) expect(redact.text(t.text, t.key)).not.toMatch(/QMT301-\d{4}/);
    expect(texts.some((t) => /ranked 1/.test(redact.text(t.text, t.key)))).toBe(true);
  });
});
