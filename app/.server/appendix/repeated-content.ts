/**
 * The repeated-measures (MMRM) results of the appendix and the sponsor report: records and
 * subjects analysed, the covariance structure used against the planned one, the estimated
 * variances and correlations of the visits, the coefficients with their df, adjusted means by arm
 * and visit, treatment contrasts at each visit (the primary visit marked), the F tests, and the
 * subjects per visit and arm. Model-level numbers only: no subject id, no record. The words of
 * each repeated-measures figure live in its module (app/figures/repeated/). Pure.
 */
import { plannedVisitContrasts } from "~/engine/repeated/repeated-model";
import type { Block } from "~/shared/appendix-content";
import { fmt, fmtCi, fmtP } from "~/shared/format";
import type { RepeatedResult, RepeatedTest, VisitContrast } from "~/engine/repeated/repeated-model";
import { MULTIPLICITY_NAMES } from "~/engine/multiplicity";
import { DF_WORDS, structureName } from "./repeated-methods";

const DF_NAMES = {
  satterthwaite: "Satterthwaite",
  "kenward-roger": "Kenward–Roger",
  residual: "residual",
} as const;

/** The method in words: "Mixed model for repeated measures, REML, unstructured covariance, Satterthwaite df" (the API's and the report's method). */
export function repeatedMethodWords(r: RepeatedResult): string {
  const df = DF_NAMES[r.dfMethod];
  return `Mixed model for repeated measures, ${r.method === "reml" ? "REML" : "ML"}, ${structureName(r.covariance.structure)} covariance of the visits, ${df} df`;
}

/** Degrees of freedom as printed: whole numbers as such, approximations to one decimal. */
export const fmtDf = (df: number | null | undefined): string =>
  df === null || df === undefined || !Number.isFinite(df)
    ? "—"
    : Number.isInteger(df)
      ? String(df)
      : fmt(df, 1);

/** Subjects analysed: the count a check's "n of m subjects" reads (records for the other models are subjects). */
export function subjectsAnalysed(r: { kind: string; n: number; subjectCount?: number }): number {
  return r.kind === "repeated" && r.subjectCount !== undefined ? r.subjectCount : r.n;
}

/** Who the figures' alt text counts: "N subjects", or "N records of M subjects". */
export function analysedWords(r: { kind: string; n: number; subjectCount?: number }): string {
  return r.kind === "repeated" && r.subjectCount !== undefined
    ? `${r.n} records of ${r.subjectCount} subjects`
    : `${r.n} subjects`;
}

/** The structure used, and why each structure tried before it was not, in one sentence. */
export function structureSentence(r: RepeatedResult): string {
  const c = r.covariance;
  const failed = c.attempts.filter((a) => a.structure !== c.structure && a.reason);
  if (c.structure === c.planned)
    return `The planned ${structureName(c.planned)} covariance structure was used (converged in ${c.iterations} iterations).`;
  return (
    `The ${structureName(c.structure)} covariance structure was used instead of the planned ${structureName(c.planned)}. ` +
    `Not used: ${failed.map((a) => `${structureName(a.structure)} (${a.reason})`).join("; ")}.`
  );
}

/** The primary visit's contrasts in one sentence: the headline of the report. */
export function headlineSentence(r: RepeatedResult): string | null {
  const primary = (r.adjustedMeans?.contrasts ?? []).filter((c) => c.visit === r.influence.primaryVisit);
  if (!primary.length) return null;
  return `At the primary visit (${r.influence.primaryVisit}): ${primary
    .map(
      (c) =>
        `${c.label}, difference in adjusted means ${fmt(c.estimate)} (95% CI ${fmtCi(c.lower, c.upper)}; t ${fmt(c.statistic, 2)} on ${fmtDf(c.df)} df, p ${fmtP(c.p).startsWith("<") ? fmtP(c.p) : `= ${fmtP(c.p)}`})`,
    )
    .join("; ")}.`;
}

const testRow = (name: string, t: RepeatedTest): string[] => [
  name,
  t.hypothesis,
  fmt(t.statistic, 2),
  `F with ${fmtDf(t.numeratorDf)} and ${fmtDf(t.denominatorDf)} df`,
  fmtP(t.p),
];

/** The results blocks of a repeated-measures rerun, numbered by `next`. */
export function repeatedResultBlocks(
  r: RepeatedResult,
  rerunId: string,
  modelTitle: string,
  next: { table: () => number },
): Block[] {
  const c = r.covariance;
  const df = DF_NAMES[r.dfMethod];
  const am = r.adjustedMeans;
  const primaryVisit = r.influence.primaryVisit;
  const visitCell = (v: string) => (v === primaryVisit ? `${v} (primary)` : v);
  const blocks: Block[] = [
    {
      kind: "paragraph",
      text:
        `${r.n} records of ${r.subjectCount} subjects analysed by a mixed model for repeated measures (normal errors, identity link), ${r.method === "reml" ? "REML" : "ML"} estimation; ` +
        `${r.excluded} record${r.excluded === 1 ? "" : "s"} left out for a missing value. ${structureSentence(r)}`,
    },
  ];
  const headline = headlineSentence(r);
  if (headline) blocks.push({ kind: "paragraph", text: headline });
  blocks.push({
    kind: "table",
    key: `fit:${rerunId}`,
    number: next.table(),
    caption: `Fit of the model, ${modelTitle}`,
    columns: [{ label: "Quantity" }, { label: "Value" }],
    rows: [
      [
        "Estimation",
        r.method === "reml" ? "Restricted maximum likelihood (REML)" : "Maximum likelihood (ML)",
      ],
      ["Covariance structure used", structureName(c.structure)],
      ["Covariance structure planned", structureName(c.planned)],
      [
        "Structures tried, in order",
        c.attempts
          .map(
            (a) =>
              `${structureName(a.structure)}: ${a.reason === null ? `converged (${a.iterations} iterations)` : a.reason}`,
          )
          .join("; "),
      ],
      ["Records analysed", String(r.n)],
      ["Subjects analysed", String(r.subjectCount)],
      [`Log-likelihood (${r.method === "reml" ? "REML" : "ML"})`, fmt(c.logLik, 2)],
      ["Akaike information criterion", fmt(c.aic, 2)],
      ["Bayesian information criterion", fmt(c.bic, 2)],
      ["Parameters (coefficients and covariance)", String(c.parameterCount)],
      ["Degrees of freedom", `${df[0].toUpperCase()}${df.slice(1)}`],
      ...(r.structureTest
        ? [
            [
              "Likelihood-ratio test against the unstructured covariance",
              r.structureTest.statistic === null
                ? `not computed: ${r.structureTest.reason ?? "no unstructured fit"}`
                : `χ² ${fmt(r.structureTest.statistic, 2)} with ${fmtDf(r.structureTest.df)} df, p ${fmtP(r.structureTest.p)}`,
            ],
          ]
        : []),
    ],
    note: `Information criteria count the coefficients and the covariance parameters. Degrees of freedom: ${DF_WORDS[r.dfMethod]}.`,
  });
  blocks.push({
    kind: "table",
    key: `visit-covariance:${rerunId}`,
    number: next.table(),
    caption: `Estimated variances and correlations of the visits within a subject (${structureName(c.structure)}), ${modelTitle}`,
    columns: [
      { label: "Visit" },
      { label: "Variance", numeric: true },
      { label: "SD", numeric: true },
      ...c.visits.map((v) => ({ label: `Correlation with ${v}`, numeric: true })),
    ],
    rows: c.visits.map((v, a) => [
      v,
      fmt(c.matrix[a][a]),
      fmt(Math.sqrt(c.matrix[a][a])),
      ...c.visits.map((_, b) => (b === a ? "1" : fmt(c.correlation[a][b]))),
    ]),
    note: "The fitted covariance matrix of one subject's errors across the visits, as variances and correlations.",
  });
  blocks.push({
    kind: "table",
    key: `coefficients:${rerunId}`,
    number: next.table(),
    caption: `Estimated coefficients, ${modelTitle}`,
    columns: [
      { label: "Coefficient" },
      { label: "Estimate", numeric: true },
      { label: "SE", numeric: true },
      { label: "df", numeric: true },
      { label: "t", numeric: true },
      { label: "p", numeric: true },
      { label: "95% CI", numeric: true },
    ],
    rows: r.coefficients.map((x) => [
      x.name,
      fmt(x.estimate),
      fmt(x.se),
      fmtDf(x.df),
      fmt(x.statistic, 2),
      fmtP(x.p),
      fmtCi(x.lower, x.upper),
    ]),
    note: `${r.coefficientCovarianceType === "model-based" ? "Model-based" : "Kenward–Roger adjusted"} standard errors; t and intervals on ${df} degrees of freedom.`,
  });
  if (am) {
    blocks.push({
      kind: "table",
      key: `adjusted-means:${rerunId}`,
      number: next.table(),
      caption: `Adjusted means of ${r.spec.response} by arm and visit, ${modelTitle}`,
      columns: [
        { label: "Visit" },
        { label: "Arm" },
        { label: "Adjusted mean", numeric: true },
        { label: "SE", numeric: true },
        { label: "df", numeric: true },
        { label: "95% CI", numeric: true },
      ],
      rows: am.means.map((m) => [
        visitCell(m.visit),
        m.level,
        fmt(m.estimate),
        fmt(m.se),
        fmtDf(m.df),
        fmtCi(m.lower, m.upper),
      ]),
      note:
        `Continuous covariates at their mean over the records analysed${am.grid.covariates.length ? ` (${am.grid.covariates.map((g) => `${g.variable} ${fmt(g.value)}`).join(", ")})` : ""}; ` +
        `categorical covariates weighted ${am.weighting === "proportional" ? "in proportion to their frequencies" : "equally"}.`,
    });
    const pairwise = r.spec.contrasts === "pairwise" && am.pairwise.length > 0;
    const contrasts: VisitContrast[] = plannedVisitContrasts(r);
    const method = r.spec.multiplicity && r.spec.multiplicity !== "none" ? r.spec.multiplicity : null;
    if (contrasts.length)
      blocks.push({
        kind: "table",
        key: `contrasts:${rerunId}`,
        number: next.table(),
        caption: `Treatment contrasts ${pairwise ? "between every pair of arms" : "against the reference arm"} at each visit, ${modelTitle}`,
        columns: [
          { label: "Visit" },
          { label: "Comparison" },
          { label: "Difference", numeric: true },
          { label: "SE", numeric: true },
          { label: "df", numeric: true },
          { label: "t", numeric: true },
          { label: "p", numeric: true },
          ...(method ? [{ label: `p, ${MULTIPLICITY_NAMES[method]}`, numeric: true }] : []),
          { label: "95% CI", numeric: true },
        ],
        rows: contrasts.map((x) => [
          visitCell(x.visit),
          x.label,
          fmt(x.estimate),
          fmt(x.se),
          fmtDf(x.df),
          fmt(x.statistic, 2),
          fmtP(x.p),
          ...(method ? [fmtP(x.pAdjusted)] : []),
          fmtCi(x.lower, x.upper),
        ]),
        note:
          `Differences in adjusted means; degrees of freedom by the ${df} method. The primary visit is marked. ` +
          (method
            ? `p adjusted for multiplicity by the ${MULTIPLICITY_NAMES[method]} method within the comparisons at each visit, beside the unadjusted p.`
            : "p-values are not adjusted for multiplicity."),
      });
  }
  const tests = [
    ...(r.tests.treatment ? [testRow("Treatment", r.tests.treatment)] : []),
    ...(r.tests.treatmentByVisit ? [testRow("Treatment by visit", r.tests.treatmentByVisit)] : []),
  ];
  if (tests.length || r.tests.notes.length)
    blocks.push({
      kind: "table",
      key: `repeated-tests:${rerunId}`,
      number: next.table(),
      caption: `Tests of treatment and of treatment by visit, ${modelTitle}`,
      columns: [
        { label: "Test" },
        { label: "Hypothesis", prose: true },
        { label: "Statistic", numeric: true },
        { label: "Reference distribution" },
        { label: "p", numeric: true },
      ],
      rows: tests,
      note: r.tests.notes.length
        ? `${r.tests.notes.map((n) => `${n[0].toUpperCase()}${n.slice(1)}`).join(". ")}.`
        : `Denominator degrees of freedom by the ${df} method.`,
    });
  // the reference arm first, then the others in the model's order
  const reference = am?.contrasts[0]?.reference ?? null;
  const levels = [...new Set(r.counts.map((x) => x.level))].sort(
    (x, y) => Number(y === reference) - Number(x === reference),
  );
  blocks.push({
    kind: "table",
    key: `visit-counts:${rerunId}`,
    number: next.table(),
    caption: `Subjects with a record at each visit${levels[0] === null ? "" : ", by arm"}, ${modelTitle}`,
    columns: [{ label: "Visit" }, ...levels.map((l) => ({ label: l ?? "Subjects", numeric: true }))],
    rows: c.visits.map((v) => [
      visitCell(v),
      ...levels.map((l) => String(r.counts.find((x) => x.visit === v && x.level === l)?.subjects ?? 0)),
    ]),
    note: "Records analysed at each visit (one per subject); subjects without a record at a visit contribute their other visits.",
  });
  return blocks;
}
