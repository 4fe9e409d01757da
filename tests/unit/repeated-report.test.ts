/**
 * A signed repeated-measures (MMRM) rerun in the Word appendix, the sponsor report and the API.
 * The invented three-arm trial tests/fixtures/mmrm-trial.csv is uploaded and locked through the
 * services, a repeated-measures plan is approved, and the rerun document is the engine's fit of
 * it (fitRepeatedModel on the locked table) stored as a completed rerun and signed. The appendix's
 * numbers are read back from the .docx against the stored result and against R's values for the
 * same model (nlme::gls REML and emmeans, tests/reference/repeated/values/trial-unstructured-reml.json,
 * written by tests/reference/repeated/generate.R); no subject id reaches the appendix, the report,
 * or the API answer of a role without subject-level access, while a biostatistician's answer
 * carries the records and subject influence. API answers are validated against the OpenAPI document.
 */
import { createHash } from "node:crypto";
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import path from "node:path";
import Ajv2020 from "ajv/dist/2020.js";
import addFormats from "ajv-formats";
import JSZip from "jszip";
import { createElement } from "react";
import { renderToStaticMarkup } from "react-dom/server";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t, newId } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const datasets = await import("~/.server/datasets/datasets.server");
const { loadLockedTable } = await import("~/.server/datasets/catalog.server");
const findings = await import("~/.server/reruns/findings.server");
const { writeResultFile } = await import("~/.server/reruns/result-files");
const { config } = await import("~/.server/config.server");
const { actorOf } = await import("~/.server/people.server");
const { canonicalJson } = await import("~/.server/canonical-json");
const { buildAppendixContent } = await import("~/.server/appendix/build-content.server");
const { repeatedResultBlocks } = await import("~/.server/appendix/repeated-content");
const appendix = await import("~/.server/appendix/appendix.server");
const { getReport } = await import("~/.server/reports/reports.server");
const { getStudyRerun } = await import("~/.server/api/reruns.server");
const { openApiDocument } = await import("~/.server/api/openapi");
const { fitRepeatedModel } = await import("~/engine/repeated/repeated-model");
const { RepeatedReportSections } = await import("~/components/repeated-report");
const { REPEATED_CHECKS } = await import("~/engine/repeated/repeated-check-catalogue");
const { ENGINE_VERSION, RESULTS_CAUTION } = await import("~/engine/version");
const { eq } = await import("drizzle-orm");

type RepeatedResult = import("~/engine/repeated/repeated-model").RepeatedResult;
type RerunDocument = import("~/.server/reruns/reruns.server").RerunDocument;
type Table = Extract<import("~/shared/appendix-content").Block, { kind: "table" }>;

const CAUTION = "Results support, but do not replace, qualified statistical and medical review.";
const MODEL_FILE = path.resolve("tests/reference/repeated/models/trial-unstructured-reml.json");
/** R's values for the same model and data (nlme::gls REML, emmeans; tests/reference/repeated/generate.R). */
const R = JSON.parse(
  readFileSync(path.resolve("tests/reference/repeated/values/trial-unstructured-reml.json"), "utf8"),
) as {
  logLik: number;
  aic: number;
  coefficients: { name: string; estimate: number; se: number }[];
  contrasts: { label: string; visit: string; estimate: number; se: number; df: number }[];
};

let studyId = "";
let rerunId = "";
let result: RepeatedResult;
let ids: string[] = [];
let content: Awaited<ReturnType<typeof buildAppendixContent>>;
let documentXml = "";
type Person = { id: string; displayName: string; email: string; organisation: string | null };
const people: Record<"priya" | "tomas" | "sam" | "dana", Person> = {} as never;

async function person(email: string): Promise<Person> {
  const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
  return { id: p.id, displayName: p.displayName, email: p.email, organisation: p.organisation };
}
const actor = (p: Person) => ({ id: p.id, name: p.displayName });

/** A number as the tables print it: a true minus sign. */
const num = (cell: string) => Number(cell.replace(/−/g, "-"));
const ci = (cell: string) => cell.split(" to ").map(num);
/** A printed value against the exact one: within half a unit of the printed last decimal (and a hair). */
function printed(cell: string, exact: number, decimals: number) {
  expect(Math.abs(num(cell) - exact), `${cell} against ${exact}`).toBeLessThanOrEqual(
    0.5 * 10 ** -decimals + 1e-9,
  );
}

const tableOf = (key: string): Table => {
  const b = content.sections.flatMap((s) => s.blocks).find((x) => x.kind === "table" && x.key === key);
  if (!b || b.kind !== "table") throw new Error(`no table ${key}`);
  return b;
};

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  people.priya = await person("priya.lindqvist@plumbline.example");
  people.tomas = await person("tomas.berg@plumbline.example");
  people.sam = await person("sam.quill@quillmoor.example");
  people.dana = await person("dana.okafor@plumbline.example");
  const dana = actorOf(people.dana);
  const up = await datasets.uploadBytes(dana, {
    studyId,
    datasetName: "admmrm",
    fileName: "admmrm.csv",
    bytes: readFileSync(path.resolve("tests/fixtures/mmrm-trial.csv"), "utf8"),
  });
  if (!up.ok) throw new Error(up.problems.join(" "));
  const detail = await datasets.getVersionDetail(studyId, up.versionId);
  for (const hit of detail?.hits ?? []) {
    const done = await datasets.recordNotIdentifier(dana, studyId, hit.id, "Invented codes of test data.");
    if (!done.ok) throw new Error(done.message);
  }
  const locked = await datasets.lockVersion(
    { ...dana, signedInAt: new Date().toISOString() },
    studyId,
    up.versionId,
  );
  if (!locked.ok) throw new Error(locked.message);

  // the plan: the reference model with a fallback list and the repeated-measures checks
  const reference = JSON.parse(readFileSync(MODEL_FILE, "utf8")) as {
    repeated: Record<string, unknown>;
  } & Record<string, unknown>;
  const spec = { ...reference, family: "gaussian" };
  spec.repeated = { ...spec.repeated, fallback: ["toeplitz", "ar1"], primaryVisit: "Week 12" };
  const { versionId } = await plans.createPlan(actor(people.priya), studyId, {
    title: "Repeated-measures models",
    sapName: "Statistical analysis plan",
    sapVersion: "1.0",
    sapDate: "2026-09-01",
  });
  const title = "Change from baseline over visits (MMRM)";
  const plannedModelId = await plans.savePlannedModel(actor(people.priya), studyId, versionId, 1, null, {
    key: "mmrm",
    title,
    datasetName: "admmrm",
    spec: spec as never,
    checks: REPEATED_CHECKS.map((c) => ({
      key: c.key,
      enabled: true,
      threshold: c.defaultThreshold,
      remedy: c.defaultRemedy,
    })),
    sensitivity: [],
  });
  await plans.submitForApproval(actor(people.priya), studyId, versionId, 2);
  await plans.approvePlanVersion(
    { ...actor(people.tomas), signedInAt: new Date().toISOString() },
    studyId,
    versionId,
  );

  // the engine's fit on the locked table, stored as a completed rerun (the product's rerun path lands separately)
  const lockedTable = await loadLockedTable(up.versionId);
  result = fitRepeatedModel(spec, lockedTable.table);
  ids = [...new Set(result.observations.id)];
  const worst = result.subjects
    .map((s, i) => ({ s, i }))
    .sort((a, b) => b.s.cooksDistance - a.s.cooksDistance)
    .slice(0, 3);
  const bound = 4 / result.subjectCount;
  const flagged = worst.filter((w) => w.s.cooksDistance > bound);
  const rowOf = (id: string) => result.observations.row[result.observations.id.indexOf(id)];
  const [version] = await db.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, up.versionId));
  const doc: RerunDocument = {
    engineVersion: ENGINE_VERSION,
    caution: RESULTS_CAUTION,
    datasetSha256: version.sha256,
    planVersionId: versionId,
    plannedModel: { key: "mmrm", title },
    options: { variant: "planned" },
    description: "Primary analysis as planned",
    rows: {
      inFile: lockedTable.table.rowNumbers.length,
      outsidePopulation: 0,
      excludedByOption: 0,
      missingCells: result.excluded,
      used: result.n,
    },
    population: [],
    populationSteps: [],
    result,
    checks: [
      {
        key: "repeated_influence",
        label: REPEATED_CHECKS.find((c) => c.key === "repeated_influence")!.label,
        outcome: flagged.length ? "finding" : "within",
        // as the engine's texts name a subject: the redaction must turn it into a rank
        statistic: `largest subject Cook's distance ${worst[0].s.cooksDistance.toFixed(3)} (subject ${worst[0].s.id})`,
        threshold: `4/m = ${bound.toFixed(4)}`,
        summary: `${flagged.length} subjects beyond the threshold; the most extreme is subject ${worst[0].s.id}.`,
        remedy: "Review the flagged subjects",
        figure: "repeated_influence",
        flagged: flagged.map((w, k) => ({
          row: rowOf(w.s.id),
          id: w.s.id,
          value: w.s.cooksDistance,
          rank: k + 1,
        })),
        value: worst[0].s.cooksDistance,
      },
    ],
  };
  const json = canonicalJson(doc);
  const resultSha256 = createHash("sha256").update(json).digest("hex");
  // stored as the compute thread stores a result: its file named by its hash (result-files.ts)
  await writeResultFile(path.resolve(config.DATA_DIR), resultSha256, json);
  rerunId = newId();
  await db.insert(t.reruns).values({
    id: rerunId,
    studyId,
    plannedModelId,
    planVersionId: versionId,
    datasetVersionId: up.versionId,
    kind: "primary",
    optionsJson: canonicalJson(doc.options),
    label: "Primary analysis as planned",
    status: "completed",
    datasetSha256: version.sha256,
    engineVersion: ENGINE_VERSION,
    resultSha256,
    startedBy: people.priya.id,
    startedAt: new Date().toISOString(),
    finishedAt: new Date().toISOString(),
  });
  await findings.signRerun(
    { ...actor(people.tomas), signedInAt: new Date().toISOString() },
    studyId,
    rerunId,
  );

  content = await buildAppendixContent(studyId, { kind: "rerun", rerunId });
  const rendered = await appendix.renderAppendix(studyId, { kind: "rerun", rerunId });
  documentXml = await (await JSZip.loadAsync(rendered.bytes)).file("word/document.xml")!.async("string");
  mkdirSync(path.resolve("test-results", "appendix"), { recursive: true });
  writeFileSync(path.resolve("test-results", "appendix", "appendix-repeated.docx"), rendered.bytes);
}, 240_000);

describe("the Word appendix of a signed repeated-measures rerun", () => {
  it("fits the reference model as R does (the fixture behind every table below)", () => {
    expect(result.covariance.structure).toBe("unstructured");
    expect(Math.abs(result.covariance.logLik - R.logLik)).toBeLessThan(1e-5);
  });

  it("states records and subjects, the structure used and planned, REML, log-likelihood and AIC", () => {
    const fit = tableOf(`fit:${rerunId}`);
    const value = (label: string) => fit.rows.find((r) => r[0] === label)?.[1];
    expect(value("Records analysed")).toBe(String(result.n));
    expect(value("Subjects analysed")).toBe(String(result.subjectCount));
    expect(value("Covariance structure used")).toBe("unstructured");
    expect(value("Covariance structure planned")).toBe("unstructured");
    expect(value("Estimation")).toBe("Restricted maximum likelihood (REML)");
    // R's REML log-likelihood and AIC (nlme::gls), printed to 2 decimals
    printed(value("Log-likelihood (REML)")!, R.logLik, 2);
    printed(value("Akaike information criterion")!, R.aic, 2);
    expect(value("Degrees of freedom")).toBe("Satterthwaite");
  });

  it("tabulates the visits' variances and correlations as estimated", () => {
    const c = result.covariance;
    const tbl = tableOf(`visit-covariance:${rerunId}`);
    expect(tbl.rows.map((r) => r[0])).toEqual(c.visits);
    tbl.rows.forEach((row, a) => {
      printed(row[1], c.matrix[a][a], 3);
      c.visits.forEach((_, b) =>
        a === b ? expect(row[3 + b]).toBe("1") : printed(row[3 + b], c.correlation[a][b], 3),
      );
    });
  });

  it("has coefficients with SE, df, t, p and 95% CI equal to the result's, and SEs equal to R's", () => {
    const tbl = tableOf(`coefficients:${rerunId}`);
    expect(tbl.columns.map((c) => c.label)).toEqual([
      "Coefficient",
      "Estimate",
      "SE",
      "df",
      "t",
      "p",
      "95% CI",
    ]);
    expect(tbl.rows).toHaveLength(result.coefficients.length);
    tbl.rows.forEach((row, j) => {
      const x = result.coefficients[j];
      expect(row[0]).toBe(x.name);
      printed(row[1], x.estimate, 3);
      printed(row[2], x.se, 3);
      printed(row[3], x.df, 1);
      printed(row[4], x.statistic, 2);
      if (x.p >= 0.0001) printed(row[5], x.p, 4);
      else expect(row[5]).toBe("<0.0001");
      const [lo, hi] = ci(row[6]);
      printed(String(lo), x.lower, 3);
      printed(String(hi), x.upper, 3);
      printed(row[1], R.coefficients[j].estimate, 3);
      printed(row[2], R.coefficients[j].se, 3);
    });
  });

  it("has adjusted means by arm and visit, and contrasts per visit with the primary visit marked", () => {
    const am = result.adjustedMeans!;
    const means = tableOf(`adjusted-means:${rerunId}`);
    expect(means.rows).toHaveLength(am.means.length);
    means.rows.forEach((row, i) => {
      expect(row[0].replace(" (primary)", "")).toBe(am.means[i].visit);
      expect(row[1]).toBe(am.means[i].level);
      printed(row[2], am.means[i].estimate, 3);
      printed(row[3], am.means[i].se, 3);
      printed(row[4], am.means[i].df, 1);
    });
    const contrasts = tableOf(`contrasts:${rerunId}`);
    expect(contrasts.rows).toHaveLength(am.contrasts.length);
    contrasts.rows.forEach((row, i) => {
      const x = am.contrasts[i];
      expect(row[0]).toBe(x.visit === "Week 12" ? "Week 12 (primary)" : x.visit);
      expect(row[1]).toBe(x.label);
      printed(row[2], x.estimate, 3);
      printed(row[3], x.se, 3);
      printed(row[4], x.df, 1);
      // emmeans' contrast of the same arms at the same visit (R labels "A - B")
      const r = R.contrasts.find((c) => c.visit === x.visit && c.label === `${x.level} - ${x.reference}`);
      if (r) {
        printed(row[2], r.estimate, 3);
        printed(row[3], r.se, 3);
      }
    });
    expect(contrasts.note).toMatch(/Satterthwaite/);
    expect(
      R.contrasts.some((c) => contrasts.rows.some((row) => row[1] === c.label.replace(" - ", " vs "))),
    ).toBe(true);
  });

  it("has the treatment and treatment-by-visit F tests, and the subjects per visit and arm", () => {
    const tests = tableOf(`repeated-tests:${rerunId}`);
    expect(tests.rows.map((r) => r[0])).toEqual(["Treatment", "Treatment by visit"]);
    printed(tests.rows[0][2], result.tests.treatment!.statistic, 2);
    expect(tests.rows[0][3]).toMatch(/^F with 2 and [\d.]+ df$/);
    printed(tests.rows[0][4], result.tests.treatment!.p, 4);
    const counts = tableOf(`visit-counts:${rerunId}`);
    const arms = counts.columns.slice(1).map((c) => c.label);
    // the reference arm first
    expect(arms).toEqual(["Placebo", "Dose 10 mg", "Dose 20 mg"]);
    counts.rows.forEach((row, v) =>
      arms.forEach((arm, a) =>
        expect(Number(row[1 + a])).toBe(
          result.counts.find((x) => x.visit === result.covariance.visits[v] && x.level === arm)!.subjects,
        ),
      ),
    );
  });

  it("says which structure was used instead of the planned one, and why", () => {
    const fellBack: RepeatedResult = {
      ...result,
      covariance: {
        ...result.covariance,
        structure: "toeplitz",
        attempts: [
          { structure: "unstructured", converged: false, iterations: 200, reason: "did not converge" },
          { structure: "toeplitz", converged: true, iterations: 7, reason: null },
        ],
      },
    };
    const blocks = repeatedResultBlocks(fellBack, "x", "Model", { table: () => 1 });
    expect(blocks[0].kind === "paragraph" && blocks[0].text).toMatch(
      /The Toeplitz covariance structure was used instead of the planned unstructured\. Not used: unstructured \(did not converge\)\./,
    );
    const fit = blocks.find((b) => b.kind === "table" && b.key === "fit:x");
    expect(fit?.kind === "table" && fit.rows.find((r) => r[0] === "Structures tried, in order")?.[1]).toBe(
      "unstructured: did not converge; Toeplitz: converged (7 iterations)",
    );
  });

  it("writes the methods of an MMRM: REML, structure and fallbacks, df method, missing at random, normalized residuals, subject influence", () => {
    const methods = content.sections.find((s) => s.key === "methods")!;
    const text = methods.blocks.flatMap((b) => (b.kind === "paragraph" ? [b.text] : [])).join(" ");
    expect(text).toMatch(/mixed model for repeated measures/);
    expect(text).toMatch(/restricted maximum likelihood \(REML/);
    expect(text).toMatch(/planned covariance structure .* was unstructured/);
    expect(text).toMatch(/Toeplitz and AR\(1\)/);
    expect(text).toMatch(/Satterthwaite/);
    expect(text).toMatch(/missing at random/);
    expect(text).toMatch(/Cholesky/);
    expect(text).toMatch(/exact deletion/);
    expect(text).toMatch(/the primary visit was "Week 12"/);
    expect(text).not.toMatch(/ordinary least squares/);
  });

  it("names no subject anywhere in the document, and counts flagged subjects out of the subjects analysed", () => {
    expect(ids.length).toBe(result.subjectCount);
    for (const id of ids) expect(documentXml.includes(id), `subject ${id} in the appendix`).toBe(false);
    const checks = content.sections
      .flatMap((s) => s.blocks)
      .find((b) => b.kind === "table" && b.key === `checks:${rerunId}`) as Table;
    const influence = checks.rows.find((r) => r[0].startsWith("Influential subjects"))!;
    if (/^Finding/.test(influence[3]))
      expect(influence[3]).toMatch(new RegExp(`of ${result.subjectCount} subjects`));
    expect(documentXml).toContain(CAUTION);
    // the tables reach the Word document
    for (const caption of [
      "Estimated variances and correlations of the visits within a subject",
      "Treatment contrasts against the reference arm at each visit",
      "Subjects with a record at each visit, by arm",
    ])
      expect(documentXml).toContain(caption);
  });
});

describe("the sponsor report of a repeated-measures rerun", () => {
  it("shows the contrasts at the primary visit, the structure and the tables, naming no subject", async () => {
    const report = await getReport(studyId, rerunId);
    const part = report.results.repeated!;
    expect(part.headline).toMatch(/^At the primary visit \(Week 12\): Dose 10 mg vs Placebo/);
    expect(part.structure).toMatch(/planned unstructured covariance structure was used/);
    expect(part.tables.map((x) => x.key.split(":")[0])).toEqual([
      "fit",
      "visit-covariance",
      "coefficients",
      "adjusted-means",
      "contrasts",
      "repeated-tests",
      "visit-counts",
    ]);
    expect(report.checks.map((c) => c.key)).toEqual(["repeated_influence"]);
    expect(report.checks[0].statistic).not.toContain(ids[0]);
    const text = JSON.stringify(report);
    for (const id of ids) expect(text.includes(id), id).toBe(false);
    expect(report.caution).toBe(CAUTION);
    // the page's sections: the headline, then every table with its caption and header row
    const html = renderToStaticMarkup(createElement(RepeatedReportSections, { part }));
    expect(html).toContain("Treatment effect at the primary visit");
    expect((html.match(/<table /g) ?? []).length).toBe(part.tables.length);
    expect(html).toContain("Week 12 (primary)");
    for (const id of ids) expect(html.includes(id), id).toBe(false);
  });
});

describe("the API answer of a repeated-measures rerun", () => {
  const principal = (p: Person) => ({ tokenId: "test", person: p });
  let ajv: InstanceType<typeof Ajv2020>;
  const conforms = (body: unknown) => {
    const pointer =
      "/paths/~1api~1v1~1studies~1{studyId}~1reruns~1{rerunId}/get/responses/200/content/application~1json/schema";
    const validate =
      ajv.getSchema(`openapi.json#${pointer}`) ?? ajv.compile({ $ref: `openapi.json#${pointer}` });
    expect(validate(body), JSON.stringify(validate.errors?.slice(0, 3))).toBe(true);
  };
  beforeAll(() => {
    ajv = new Ajv2020({ strict: false, allErrors: true });
    addFormats(ajv);
    ajv.addSchema(openApiDocument(), "openapi.json");
  });

  it("gives a biostatistician the model, the records and the subject influence, as the headless command does", async () => {
    const body = await getStudyRerun(principal(people.priya), studyId, rerunId);
    conforms({ caution: CAUTION, ...body });
    const r = body.results!;
    expect(r.family).toBe("gaussian");
    expect(r.method).toMatch(/^Mixed model for repeated measures, REML, unstructured/);
    expect(r.contrasts!.map((c) => c.label)).toEqual(
      result.adjustedMeans!.contrasts.filter((c) => c.visit === "Week 12").map((c) => `${c.label}, Week 12`),
    );
    const rep = r.repeated!;
    expect(rep.covariance.logLik).toBe(result.covariance.logLik);
    expect(rep.coefficients.map((c) => c.df)).toEqual(result.coefficients.map((c) => c.df));
    expect(rep.observations).toHaveLength(result.n);
    expect(rep.observations![0]).toEqual({
      row: result.observations.row[0],
      subjectId: result.observations.id[0],
      visit: result.observations.visit[0],
      fitted: result.observations.fitted[0],
      residual: result.observations.residual[0],
      normalizedResidual: result.observations.normalizedResidual[0],
    });
    expect(rep.subjects).toHaveLength(result.subjectCount);
    expect(body.checks[0].flagged.every((f) => typeof f.subjectId === "string")).toBe(true);
  });

  it("gives a sponsor reader the model-level parts only, with no subject id anywhere", async () => {
    const body = await getStudyRerun(principal(people.sam), studyId, rerunId);
    conforms({ caution: CAUTION, ...body });
    const rep = body.results!.repeated!;
    expect(rep.observations).toBeUndefined();
    expect(rep.subjects).toBeUndefined();
    expect(rep.counts.length).toBe(result.counts.length);
    expect(rep.tests.treatment!.statistic).toBe(result.tests.treatment!.statistic);
    const text = JSON.stringify(body);
    for (const id of ids) expect(text.includes(id), id).toBe(false);
    expect(body.checks[0].statistic).toMatch(/the subject ranked 1|a subject/);
  });
});
