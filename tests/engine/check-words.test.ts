/**
 * The words of the checks, coefficient names and fit statistics, read as a practitioner reads
 * them: each test named with its statistic in words (no "W = …", "BP = …"), absolute values
 * printed as absolute values, the smaller outcome class named in events per variable, the two
 * interaction checks named by what they test, collinearity named by what it measures, numbers
 * behind every text, coefficient names as "VAR: LEVEL" with interaction parts joined by " × ",
 * families as the trade writes them, and a finding's summary that says its label once. The
 * numbers themselves are checked against R elsewhere (tests/reference); here the data are the
 * reference cases' own (trial-ancova, glm-trial-responder, glm-warpbreaks-poisson).
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { fitModel, parseModelSpec, toDataTable } from "~/engine";
import {
  CHECK_BY_KEY,
  defaultChecks,
  evaluateChecks,
  findingSummary,
  summaryAfterLabel,
  withoutRepeatedLabel,
  type CheckOutcome,
} from "~/engine/checks";
import { familyWithLink } from "~/engine/family-names";
import { interactionName, levelName } from "~/engine/coefficient-names";
import { readCsvText } from "~/engine-io/read-csv";
import { fitFactsOf, fitStatisticRows } from "~/components/fit-statistics";
import { evaluateRepeatedChecks } from "~/engine/repeated/repeated-checks";
import { fitRepeatedModel } from "~/engine/repeated/repeated-model";

const REF = join(import.meta.dirname, "..", "reference");
const load = (name: string, change: Record<string, unknown> = {}) => {
  const table = toDataTable(readCsvText(readFileSync(join(REF, "data", `${name}.csv`), "utf8")));
  const spec = parseModelSpec({
    ...JSON.parse(readFileSync(join(REF, "models", `${name}.json`), "utf8")),
    ...change,
  });
  return fitModel(spec, table);
};
const byKey = (checks: CheckOutcome[]) => new Map(checks.map((c) => [c.key, c]));

describe("linear model checks (trial-ancova)", () => {
  const r = load("trial-ancova");
  const checks = byKey(evaluateChecks(r, defaultChecks(true, "gaussian")));

  it("names each test and its statistic in words, with the reference distribution, never as 'W = ' or 'BP = '", () => {
    const sw = checks.get("shapiro_wilk")!;
    expect(sw.statistic).toMatch(/^Shapiro–Wilk statistic 0\.\d{3}, p [=<] /);
    expect(checks.get("breusch_pagan")!.statistic).toMatch(
      /^Breusch–Pagan statistic \d+\.\d{3} \(χ² with \d+ degrees of freedom\), p [=<] /,
    );
    expect(checks.get("reset")!.statistic).toMatch(
      /^RESET statistic \d+\.\d{3} \(F with 2 and \d+ degrees of freedom\), p [=<] /,
    );
    for (const c of checks.values()) expect(c.statistic, c.key).not.toMatch(/\b(W|BP|F|LR χ²) = /);
  });

  it("prints an absolute value as one, with no bars around a signed number", () => {
    for (const key of ["deletion_residual", "dffits", "dfbetas_treatment"] as const) {
      const c = checks.get(key)!;
      expect(c.statistic, key).toMatch(/^largest absolute /);
      expect(c.statistic, key).not.toMatch(/\|/);
      expect(c.statistic, key).not.toMatch(/absolute [^(]*−/);
      expect(c.numbers!.statistic, key).toBeCloseTo(Math.abs(c.value as number), 12);
    }
    expect(checks.get("deletion_residual")!.threshold).toBe("|t| > 3");
  });

  it("names collinearity by what it measures, with its formula in a note", () => {
    const c = checks.get("gvif")!;
    expect(c.label).toBe("Collinearity (variance inflation, SE scale)");
    expect(c.statistic).toMatch(/^largest variance inflation on the SE scale /);
    expect(`${c.label} ${c.statistic} ${CHECK_BY_KEY.get("gvif")!.rule}`).not.toMatch(/GVIF\^|car::/);
    expect(CHECK_BY_KEY.get("gvif")!.formula).toMatchObject({ symbol: "GVIF", exponent: "1/(2df)" });
  });

  it("carries the numbers behind each text: statistic, degrees of freedom, threshold as applied, p", () => {
    const sw = checks.get("shapiro_wilk")!;
    expect(sw.numbers).toEqual({
      measure: "Shapiro–Wilk statistic",
      statistic: r.kind === "linear" ? r.tests.shapiroWilk.statistic : null,
      df: null,
      threshold: 0.05,
      compares: "p below",
      p: sw.value,
    });
    const cook = checks.get("cooks_distance")!;
    expect(cook.numbers).toMatchObject({
      measure: "largest Cook's distance",
      threshold: 4 / r.n,
      compares: "statistic above",
      p: null,
    });
    expect(checks.get("breusch_pagan")!.numbers!.df).toHaveLength(1);
    expect(checks.get("reset")!.numbers!.df).toHaveLength(2);
  });

  it("names the linear interaction check by what it tests (slopes of continuous covariates by arm)", () => {
    expect(checks.get("homogeneity_of_slopes")!.label).toBe(
      "Same covariate slopes in every arm (treatment × continuous covariates)",
    );
  });

  it("names coefficients 'VAR: LEVEL' and fit statistics in a labelled table with the family as the trade writes it", () => {
    expect(r.coefficients.map((c) => c.name)).toEqual([
      "Intercept",
      "arm: High dose",
      "arm: Low dose",
      "base",
      "age",
      "sex: M",
    ]);
    const rows = fitStatisticRows(fitFactsOf(r));
    expect(rows[0]).toEqual({
      label: "Distribution and link",
      value: "Normal (identity link), ordinary least squares",
    });
    expect(rows.map((x) => x.label)).toContain("Akaike information criterion");
    expect(rows.map((x) => `${x.label} ${x.value}`).join(" ")).not.toMatch(
      /gaussian|\bon \d+ (df|degrees of freedom)\b|Residual standard error|F-statistic/,
    );
    expect(rows.find((x) => x.label === "All terms together against the intercept alone")!.value).toMatch(
      /^F\(5, 141\) = \d+\.\d{2}, p [=<] /,
    );
  });
});

describe("generalized linear model checks", () => {
  it("events per variable names the smaller class: events when responders are rarer, non-events when they are", () => {
    const rarer = load("glm-trial-responder");
    const events = byKey(evaluateChecks(rarer, defaultChecks(true, "binomial"))).get("events_per_variable")!;
    expect(events.statistic).toMatch(
      /^\d+\.\d events \(the smaller class\) per estimated coefficient \(91 events against 147 non-events, 4 coefficients besides the intercept\)$/,
    );
    const flipped = load("glm-trial-responder", { event: "non-responder" });
    const nonEvents = byKey(evaluateChecks(flipped, defaultChecks(true, "binomial"))).get(
      "events_per_variable",
    )!;
    expect(nonEvents.statistic).toMatch(
      /^22\.8 non-events \(the smaller class\) per estimated coefficient \(91 non-events against 147 events, /,
    );
    expect(nonEvents.numbers).toMatchObject({
      statistic: 91 / 4,
      threshold: 10,
      compares: "statistic below",
    });
  });

  it("names the GLM interaction check by what it tests (the treatment with every covariate) and its statistic in words", () => {
    const r = load("glm-trial-responder");
    const c = byKey(evaluateChecks(r, defaultChecks(true, "binomial"))).get("treatment_homogeneity_glm")!;
    expect(c.label).toBe("Same treatment effect across covariate values (treatment × every covariate)");
    expect(c.label).not.toBe(CHECK_BY_KEY.get("homogeneity_of_slopes")!.label);
    expect(c.statistic).toMatch(
      /^Likelihood-ratio statistic of the treatment interactions \d+\.\d{3} \(χ² with \d+ degrees of freedom\), p [=<] /,
    );
  });

  it("writes families with their link as the trade does, and the dispersion check in words", () => {
    expect(familyWithLink("poisson", "log")).toBe("Poisson (log link)");
    expect(familyWithLink("binomial", "cloglog")).toBe("Binomial (complementary log-log link)");
    expect(familyWithLink("negative-binomial", "log")).toBe("Negative binomial (log link)");
    expect(familyWithLink("quasipoisson", "log")).toBe("Quasi-Poisson (log link)");
    const r = load("glm-warpbreaks-poisson");
    const rows = fitStatisticRows(fitFactsOf(r));
    expect(rows[0].value).toBe("Poisson (log link), maximum likelihood");
    expect(rows.find((x) => x.label === "Deviance of the model")!.value).toMatch(
      /^\d+\.\d{2} \(\d+ residual degrees of freedom\)$/,
    );
    expect(rows.map((x) => `${x.label} ${x.value}`).join(" ")).not.toMatch(
      /Residual deviance|Null deviance|\bon \d+ degrees of freedom/,
    );
    expect(rows.find((x) => x.label === "Dispersion")!.value).toBe("1.000, fixed by the family");
    const over = byKey(evaluateChecks(r, defaultChecks(true, "poisson"))).get("overdispersion")!;
    expect(over.statistic).toMatch(
      /^dispersion ratio \(Pearson χ² per residual degree of freedom\) \d+\.\d{2}, p [=<] /,
    );
    expect(over.summary).not.toMatch(/^Overdispersion:/);
    expect(r.coefficients.map((c) => c.name)).toEqual(["Intercept", "wool: B", "tension: H", "tension: M"]);
  });
});

describe("names and summaries", () => {
  it("joins interaction parts with ×", () => {
    expect(interactionName([levelName("arm", "High dose"), "base"])).toBe("arm: High dose × base");
  });

  it("says a finding's label once, also for summaries stored with it twice", () => {
    expect(
      findingSummary("Overdispersion", "The counts vary about 2.3 times as much as a Poisson model allows."),
    ).toBe("Overdispersion: The counts vary about 2.3 times as much as a Poisson model allows.");
    expect(findingSummary("Overdispersion", "Overdispersion: the counts vary.")).toBe(
      "Overdispersion: the counts vary.",
    );
    expect(withoutRepeatedLabel("Overdispersion: Overdispersion: the counts vary about 2.3 times")).toBe(
      "Overdispersion: the counts vary about 2.3 times",
    );
    expect(withoutRepeatedLabel("Cook's distance: 3 of 150 subjects exceed the threshold.")).toBe(
      "Cook's distance: 3 of 150 subjects exceed the threshold.",
    );
    // a table with a Check column: the summary without the label, once or twice
    expect(summaryAfterLabel("Overdispersion", "Overdispersion: Overdispersion: the counts vary")).toBe(
      "The counts vary",
    );
    expect(
      summaryAfterLabel("Cook's distance", "Cook's distance: 3 of 150 subjects exceed the threshold."),
    ).toBe("3 of 150 subjects exceed the threshold.");
    expect(summaryAfterLabel("", "Not estimable as planned: the design is singular.")).toBe(
      "Not estimable as planned: the design is singular.",
    );
  });
});

describe("repeated-measures checks (the invented MMRM trial of tests/reference/repeated)", () => {
  const dir = join(REF, "repeated");
  const r = fitRepeatedModel(
    JSON.parse(readFileSync(join(dir, "models", "trial-unstructured-reml.json"), "utf8")),
    readCsvText(readFileSync(join(dir, "data", "trial.csv"), "utf8")),
  );
  const checks = byKey(evaluateRepeatedChecks(r, defaultChecks(true, "repeated")));

  it("names each test and its statistic in words, with the reference distribution and what it was computed on", () => {
    expect(checks.get("repeated_normality")!.statistic).toMatch(
      /^Shapiro–Wilk statistic 0\.\d{3}, p [=<] 0\.\d{4} \(523 normalized residuals\)$/,
    );
    expect(checks.get("repeated_spread")!.statistic).toMatch(
      /^Brown–Forsythe statistic \d+\.\d{3} \(F with 14 and 508 degrees of freedom\), p [=<] 0\.\d{4} \(normalized residuals across 15 visit-by-arm cells\)$/,
    );
    for (const c of checks.values()) expect(c.statistic, c.key).not.toMatch(/\b(W|F) = /);
  });

  it("names the structure in words, the largest subject influence with its subject, and the arm with the fewest subjects at the primary visit", () => {
    expect(checks.get("repeated_convergence")!.statistic).toBe(
      "converged with the unstructured structure, position 1 of 1 in the plan's list (planned: unstructured)",
    );
    expect(checks.get("repeated_influence")!.statistic).toMatch(
      /^largest subject Cook's distance 0\.\d{3} \(subject S-\d{3}, \d records\)$/,
    );
    expect(checks.get("repeated_influence")!.threshold).toBe("4/m = 4/120 = 0.0333");
    expect(checks.get("repeated_primary_visit")!.statistic).toMatch(
      /\(Week 16\) 0\.725 \(Dose 10 mg: 29 of 40 subjects\)$/,
    );
  });

  it("carries the numbers behind every text", () => {
    for (const c of checks.values()) expect(c.numbers, c.key).toBeDefined();
  });
});
