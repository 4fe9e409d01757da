/**
 * The demo study's visit-level dataset (advisits.csv): reproducible, consistent with adeff.csv
 * (the week-12 change is adeff's, no visit after a subject's last day on treatment), and fitted
 * by the demo's planned repeated-measures model with the planned unstructured covariance.
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { generateDemoDataset } from "~/.server/demo/demo-dataset";
import { DEMO_VISITS, demoVisitsCsv, generateDemoVisits } from "~/.server/demo/demo-visits";
import { fitRepeatedModel } from "~/engine/repeated/repeated-model";

describe("the demo's visit-level dataset", () => {
  const subjects = generateDemoDataset().rows;
  const { rows } = generateDemoVisits();

  it("gives the same bytes on every run, those R's reference values were computed from", () => {
    expect(demoVisitsCsv()).toBe(demoVisitsCsv());
    expect(demoVisitsCsv()).toBe(readFileSync("tests/reference/repeated/data/demo-advisits.csv", "utf8"));
    expect(rows).toHaveLength(1740);
  });

  it("carries adeff's week-12 change and no visit after a subject left treatment", () => {
    const bySubject = new Map(subjects.map((s) => [s.subjid, s]));
    for (const r of rows) {
      const s = bySubject.get(r.subjid)!;
      expect(s.fasfl).toBe("Y");
      const visit = DEMO_VISITS.find((v) => v.label === r.avisit)!;
      if (visit.week === 12) expect(r.chg).toBe(s.chg);
      else expect(visit.day).toBeLessThanOrEqual(Number(s.expdays));
      expect(Number(r.aval)).toBeCloseTo(Number(r.base) + Number(r.chg), 6);
    }
    const completers = subjects.filter((s) => s.chg !== "").length;
    expect(rows.filter((r) => r.avisit === "Week 12")).toHaveLength(completers);
  });

  it("is fitted by the demo's planned MMRM with the unstructured covariance, the planted subject most influential", () => {
    const columns: Record<string, string[]> = {};
    for (const c of Object.keys(rows[0])) columns[c] = rows.map((r) => r[c]);
    const result = fitRepeatedModel(
      {
        family: "gaussian",
        response: "chg",
        treatment: "arm",
        terms: [
          { variable: "arm", reference: "Placebo" },
          { variable: "avisit" },
          { variable: "base" },
          { variable: "stratum" },
          { interaction: ["arm", "avisit"] },
          { interaction: ["base", "avisit"] },
        ],
        repeated: {
          subject: "subjid",
          visit: "avisit",
          visitOrder: "avisitn",
          covariance: "unstructured",
          fallback: ["toeplitz", "ar1"],
          primaryVisit: "Week 12",
        },
      },
      { columns, rowNumbers: rows.map((_, i) => i + 1) },
    );
    expect(result.covariance.structure).toBe("unstructured");
    expect(result.covariance.converged).toBe(true);
    expect(result.covariance.visits).toEqual(["Week 2", "Week 4", "Week 8", "Week 12"]);
    const top = [...result.subjects].sort((a, b) => b.cooksDistance - a.cooksDistance)[0];
    expect(top.id).toBe("QMT301-0217");
    // the high dose improves the score at week 12, as the scenario says
    const high = result.adjustedMeans!.contrasts.find(
      (c) => c.visit === "Week 12" && c.level === "Lorvanitide 120 mg",
    )!;
    expect(high.upper).toBeLessThan(0);
    // R nlme::gls (REML, corSymm + varIdent) with emmeans contrasts: tests/reference/repeated/generate-demo.R
    const r = JSON.parse(readFileSync("tests/reference/repeated/values-demo/advisits.json", "utf8")) as {
      logLik: number;
      subjects: number;
      contrasts: { label: string; visit: string; estimate: number; se: number }[];
    };
    expect(result.subjectCount).toBe(r.subjects);
    expect(result.covariance.logLik).toBeCloseTo(r.logLik, 5);
    for (const c of r.contrasts) {
      const level = c.label.split(" - ")[0];
      const ours = result.adjustedMeans!.contrasts.find((x) => x.visit === c.visit && x.level === level)!;
      expect(Math.abs(ours.estimate - c.estimate) / Math.abs(c.se), `${c.label} at ${c.visit}`).toBeLessThan(
        1e-5,
      );
      expect(Math.abs(ours.se / c.se - 1), `SE of ${c.label} at ${c.visit}`).toBeLessThan(1e-5);
    }
  });
});
