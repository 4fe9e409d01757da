/**
 * The results page of a repeated-measures (MMRM) rerun: the view made on the server
 * (repeated-rerun-view.server.ts, through rerunView) carries the structure used against the
 * planned one, the likelihood, the visits' covariance labelled by visit, means and contrasts per
 * visit with their df, the F tests with the df method named and the subjects per visit and arm,
 * no observation-level arrays, and names no subject for a viewer without subject-level access (the
 * sponsor reader and the medical writer, DESIGN.md). The page's sections render it with accessible
 * tables and the figures of its checks. Built on the invented trial tests/fixtures/mmrm-trial.csv
 * (tests/support/mmrm-document.ts); its numbers are checked against R in
 * tests/reference/repeated-reference.test.ts and tests/unit/repeated-figures.test.ts.
 */
import { createElement } from "react";
import { renderToStaticMarkup } from "react-dom/server";
import { describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";
import { MMRM_MODEL, mmrmDocument, mmrmTable } from "../support/mmrm-document";

useTempDatabase();
const { redaction } = await import("~/.server/redaction.server");
const { seesSubjects } = await import("~/.server/permissions.server");
const { rerunView } = await import("~/.server/reruns/rerun-view.server");
const { ModelResults } = await import("~/components/rerun/model-results");
const { pageFigureUrls } = await import("~/components/rerun/page-figures");
const { figureAnswer } = await import("~/.server/reruns/figure-answers.server");
type RepeatedResult = import("~/engine/repeated/repeated-model").RepeatedResult;

const doc = mmrmDocument({ outlier: "S-007" });
const result = doc.result as RepeatedResult;
const ids = new Set(result.observations.id);

function repeatedView(sees: boolean) {
  const v = rerunView(doc, redaction(sees, [doc]));
  if (v.kind !== "repeated") throw new Error(`expected a repeated-measures view, got ${v.kind}`);
  return v;
}

/** Every string anywhere in a value. */
function strings(value: unknown): string[] {
  if (typeof value === "string") return [value];
  if (Array.isArray(value)) return value.flatMap(strings);
  if (value && typeof value === "object") return Object.values(value).flatMap(strings);
  return [];
}

/** The longest array anywhere in a value. */
function longestArray(value: unknown): number {
  if (Array.isArray(value)) return Math.max(value.length, ...value.map(longestArray));
  if (value && typeof value === "object") return Math.max(0, ...Object.values(value).map(longestArray));
  return 0;
}

describe("the repeated-measures results view", () => {
  const view = repeatedView(true);

  it("says which covariance structure was used against the planned one, with the fit's numbers", () => {
    expect(view.covariance.planned).toBe("Unstructured");
    expect(view.covariance.used).toBe("Unstructured");
    expect(view.covariance.asPlanned).toBe(true);
    expect(view.covariance.attempts).toEqual([
      expect.objectContaining({ structure: "Unstructured", used: true, converged: true, reason: null }),
    ]);
    expect(view.likelihood).toBe("REML");
    expect(view.covariance.logLik).toBe(result.covariance.logLik);
    expect(view.covariance.aic).toBe(result.covariance.aic);
    expect(view.covariance.bic).toBe(result.covariance.bic);
    expect(view.structureTest).toBeNull();
    expect(view.n).toBe(result.n);
    expect(view.subjects).toBe(120);
  });

  it("labels the visits' covariance and correlation by visit, in visit order", () => {
    expect(view.covariance.visits).toEqual(["Week 2", "Week 4", "Week 8", "Week 12", "Week 16"]);
    expect(view.covariance.matrix).toHaveLength(5);
    expect(view.covariance.correlation.every((row, a) => Math.abs(row[a] - 1) < 1e-12)).toBe(true);
  });

  it("gives the coefficients, means and contrasts with their df, visits in order, the reference arm first", () => {
    expect(view.coefficients.every((c) => Number.isFinite(c.df))).toBe(true);
    expect(view.arms).toEqual(["Placebo", "Dose 10 mg", "Dose 20 mg"]);
    expect(view.visitMeans).toHaveLength(15);
    expect(view.visitMeans.slice(0, 3).map((m) => [m.visit, m.level])).toEqual([
      ["Week 2", "Placebo"],
      ["Week 2", "Dose 10 mg"],
      ["Week 2", "Dose 20 mg"],
    ]);
    // the plan's contrasts (reference by default): two arms against Placebo at five visits
    expect(view.treatmentEffect.contrastSet).toBe("reference");
    expect(view.visitContrasts).toHaveLength(10);
    expect(view.visitContrasts.every((c) => c.label.endsWith("vs Placebo") && c.df > 0)).toBe(true);
    expect(view.visitContrasts.map((c) => c.visit)).toEqual(
      ["Week 2", "Week 4", "Week 8", "Week 12", "Week 16"].flatMap((v) => [v, v]),
    );
    expect(view.primaryVisit).toBe("Week 16");
  });

  it("gives the treatment and treatment-by-visit F tests with both df and the df method named", () => {
    expect(view.dfMethod).toBe("Satterthwaite");
    expect(view.tests.map((t) => t.name)).toEqual(["Treatment (ARM)", "Treatment by visit"]);
    expect(view.tests[0].numeratorDf).toBe(2);
    expect(view.tests[1].numeratorDf).toBe(8);
    expect(view.tests.every((t) => t.denominatorDf > 0 && t.p > 0 && t.p <= 1)).toBe(true);
  });

  it("counts the subjects with a record per visit and arm", () => {
    expect(view.counts.map((c) => c.visit)).toEqual(view.covariance.visits);
    const placebo16 = result.counts.find((c) => c.visit === "Week 16" && c.level === "Placebo")!.subjects;
    expect(view.counts[4].byArm[0]).toBe(placebo16);
    expect(view.counts.reduce((s, c) => s + c.byArm.reduce((a, b) => a + b, 0), 0)).toBe(result.n);
  });

  it("carries no observation-level arrays, the checks with their figures, and the caution", () => {
    expect(JSON.stringify(view)).not.toMatch(/normalizedResidual|"observations"/);
    expect(longestArray(view)).toBeLessThan(result.subjectCount);
    expect(view.checks.find((c) => c.key === "repeated_influence")?.figure).toBe("repeated_influence");
    expect(view.checks.find((c) => c.key === "repeated_convergence")?.figure).toBeNull();
    expect(view.caution).toMatch(/support, but do not replace/);
  });

  it("names the flagged subjects for a biostatistician", () => {
    const influence = view.checks.find((c) => c.key === "repeated_influence")!;
    expect(influence.outcome).toBe("finding");
    expect(influence.flagged[0].who).toBe("S-007");
    expect(influence.statistic).toMatch(/S-007/);
  });
});

describe("a plan with every pair of arms and a multiplicity method", () => {
  it("shows every pair at each visit with p adjusted within the visit, beside the unadjusted", () => {
    const pairwise = mmrmDocument({ spec: { ...MMRM_MODEL, contrasts: "pairwise", multiplicity: "holm" } });
    const view = rerunView(pairwise, redaction(true, [pairwise]));
    if (view.kind !== "repeated") throw new Error("expected a repeated-measures view");
    const visits = [...new Set(view.visitContrasts.map((c) => c.visit))];
    for (const visit of visits) {
      const at = view.visitContrasts.filter((c) => c.visit === visit);
      // three arms: two comparisons with the reference and one between the other two
      expect(at).toHaveLength(3);
      // Holm (1979): the smallest p times 3, then the running maximum of (3 − k) p(k)
      const sorted = [...at].sort((a, b) => a.p - b.p);
      expect(sorted[0].pAdjusted).toBeCloseTo(Math.min(1, 3 * sorted[0].p), 14);
      expect(sorted[2].pAdjusted).toBeGreaterThanOrEqual(sorted[1].pAdjusted ?? 0);
    }
    const html = renderToStaticMarkup(createElement(ModelResults, { view, studyId: "s", rerunId: "r" }));
    expect(html).toMatch(/p, Holm/);
  });
});

describe("a viewer without subject-level access", () => {
  for (const role of ["sponsor_reader", "medical_writer"] as const) {
    it(`${role}: no subject id anywhere in the view, flagged subjects by rank`, () => {
      const sees = seesSubjects({ role });
      expect(sees).toBe(false);
      const view = repeatedView(sees);
      const leaked = strings(view).filter((s) => [...ids].some((id) => s.includes(id)));
      expect(leaked).toEqual([]);
      expect(redaction(false, [doc]).leak(view)).toBeNull();
      const influence = view.checks.find((c) => c.key === "repeated_influence")!;
      expect(influence.flagged[0].who).toBe("subject ranked 1");
      expect(influence.statistic).toMatch(/the subject ranked 1/);
    });
  }
});

describe("the results page's repeated-measures sections", () => {
  const view = repeatedView(false);
  const html = renderToStaticMarkup(createElement(ModelResults, { view, studyId: "st", rerunId: "rr" }));

  it("render captioned tables in named scroll regions, tabular numbers, and the figures' frames", () => {
    for (const label of [
      "F tests of treatment",
      "Treatment contrasts by visit",
      "Adjusted means by visit and arm",
      "Subjects with a record by visit and arm",
      "Estimated covariance of the visits",
      "Estimated correlation of the visits",
      "Coefficients",
    ])
      expect(html).toContain(`role="region" aria-label="${label}"`);
    expect((html.match(/<caption/g) ?? []).length).toBeGreaterThanOrEqual(8);
    expect(html).toMatch(/class="num/);
    expect(html).toContain("Week 16<span");
    expect(html).toContain("Satterthwaite");
    expect(html).not.toMatch(/S-\d{3}/);
  });

  it("fetches each of the four figures once, check cards' figures first", () => {
    const urls = pageFigureUrls(view, "st", "rr");
    expect(urls.map((u) => u.split("/").pop())).toEqual([
      "repeated_qq",
      "repeated_residuals_fitted",
      "repeated_influence",
      "repeated_means",
    ]);
    for (const u of urls) expect(html).toContain(u);
  });

  it("tests a planned structure other than unstructured against unstructured", () => {
    const spec = {
      ...MMRM_MODEL,
      repeated: { ...MMRM_MODEL.repeated, covariance: "toeplitz", fallback: ["ar1"] },
    };
    const toeplitz = mmrmDocument({ spec });
    const v = rerunView(toeplitz, redaction(false, [toeplitz]));
    if (v.kind !== "repeated") throw new Error("unexpected");
    expect(v.covariance.planned).toBe("Toeplitz (one variance, a correlation per lag)");
    expect(v.structureTest?.statistic).toBeGreaterThan(0);
    expect(v.structureTest?.df).toBe(15 - 5);
  });

  it("lists every structure tried and why, when a fallback was used", () => {
    // as tests/engine/repeated-model.test.ts: weeks 2 and 8 never observed together, so neither the
    // unstructured covariance of the two nor Toeplitz's lag-2 correlation is estimable; AR(1) is
    const full = mmrmTable();
    const keep = full.columns.USUBJID.map((id, i) => {
      const visit = full.columns.AVISIT[i];
      const odd = Number(id.slice(2)) % 2 === 1;
      return (
        ["Week 2", "Week 4", "Week 8"].includes(visit) && (odd ? visit !== "Week 8" : visit !== "Week 2")
      );
    });
    const columns = Object.fromEntries(
      Object.entries(full.columns).map(([k, v]) => [k, v.filter((_, i) => keep[i])]),
    );
    const spec = {
      response: "CHG",
      terms: [{ variable: "ARM", reference: "Placebo" }, { variable: "AVISIT" }, { variable: "BASE" }],
      treatment: "ARM",
      id: "USUBJID",
      repeated: {
        subject: "USUBJID",
        visit: "AVISIT",
        visitOrder: "AVISITN",
        covariance: "unstructured",
        fallback: ["toeplitz", "ar1"],
      },
    };
    const fallback = mmrmDocument({ spec, table: { columns } });
    const v = rerunView(fallback, redaction(false, [fallback]));
    if (v.kind !== "repeated") throw new Error("unexpected");
    expect(v.covariance.asPlanned).toBe(false);
    expect(v.covariance.used).toBe("First-order autoregressive (one variance)");
    expect(v.covariance.attempts.map((a) => [a.used, a.reason === null])).toEqual([
      [false, false],
      [false, false],
      [true, true],
    ]);
    expect(v.structureTest?.statistic).toBeNull();
    const page = renderToStaticMarkup(createElement(ModelResults, { view: v, studyId: "st", rerunId: "rr" }));
    expect(page).toContain('aria-label="Covariance structures tried"');
    expect(page).toContain("a fallback of the plan");
    expect(page).toMatch(/no test: the unstructured fit did not succeed/);
  });

  it("renders a model that names no treatment: subjects per visit for all, no means, no means figure", () => {
    const { treatment: _treatment, ...spec } = MMRM_MODEL;
    const plain = mmrmDocument({ spec });
    const v = rerunView(plain, redaction(false, [plain]));
    if (v.kind !== "repeated") throw new Error("unexpected");
    expect(v.visitMeans).toEqual([]);
    expect(v.visitContrasts).toEqual([]);
    expect(v.tests).toEqual([]);
    expect(v.counts.every((c) => c.byArm.length === 1)).toBe(true);
    expect(v.checks.find((c) => c.key === "repeated_primary_visit")?.figure).toBeNull();
    const page = renderToStaticMarkup(createElement(ModelResults, { view: v, studyId: "st", rerunId: "rr" }));
    expect(page).toContain("All subjects");
    expect(page).not.toContain("Treatment effect by visit");
    expect(pageFigureUrls(v, "st", "rr").some((u) => u.endsWith("/repeated_means"))).toBe(false);
  });

  it("answers each figure from the figures route compiled to Vega, clean of subject ids for a sponsor reader", async () => {
    for (const url of pageFigureUrls(view, "st", "rr")) {
      const figure = url.split("/").pop() as Parameters<typeof figureAnswer>[0]["figure"];
      for (const withSubjectIds of [false, true]) {
        const body = await figureAnswer(
          { rerunId: "rr", resultSha256: "hash", figure, withSubjectIds },
          doc,
          async () => doc,
          async () => undefined,
        );
        const answer = JSON.parse(body) as {
          caution: string;
          spec: { marks?: unknown[] };
          data: { rows: unknown[] };
        };
        expect(answer.caution).toMatch(/support, but do not replace/);
        expect(answer.spec.marks?.length ?? 0, figure).toBeGreaterThan(0);
        expect(answer.data.rows.length, figure).toBeGreaterThan(0);
        if (!withSubjectIds) expect(body, figure).not.toMatch(/S-\d{3}/);
        else if (figure === "repeated_influence") expect(body).toMatch(/S-007/);
      }
    }
  });
});
