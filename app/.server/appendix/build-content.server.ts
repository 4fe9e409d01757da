/**
 * Builds the appendix content model from signed results: one signed primary rerun, or every
 * signed primary rerun of a plan version, each with its plan, dataset provenance, tables,
 * checks, figures, deviation log, signatures and sensitivity analyses, plus the medical
 * writer's current narrative for each section. Nothing here can be edited in the appendix.
 */
import { populationOf } from "../plans/planned-model";
import { and, asc, eq, isNotNull } from "drizzle-orm";
import { data } from "react-router";
import {
  checksOfFigure,
  figureData,
  figureListOf,
  figureModule,
  figureSpec,
  type FigureData,
} from "~/figures/registry";
import { contrastWords, forestAlt, forestPoints, forestSpec, type ForestRow } from "~/figures/forest";
import { FigureUnavailableError } from "~/figures/shared/source";
import { CHECK_BY_KEY, summaryAfterLabel, type CheckOutcome } from "~/engine/checks";
import { fmt, fmtCi, fmtP, utc } from "~/shared/format";
import { fitFactsOf, fitStatisticRows } from "~/components/fit-statistics";
import { familyWithLink } from "~/engine/family-names";
import { ACTIONS, CATEGORIES, IMPACTS } from "~/shared/assessment-terms";
import { CHECK_OUTCOME } from "~/shared/status-words";
import { loadLockedTable, type ColumnMeta } from "../datasets/catalog.server";
import { db, t } from "../db/index.server";
import { getPlannedModel, getPlanVersion } from "../plans/plans.server";
import { findingsOf, deviationLog, signaturesOf } from "../reruns/findings.server";
import { contrastsOf, reportedContrasts, treatmentEffectOf } from "../reruns/rerun-view.server";
import { populationStepsOf } from "../reruns/rerun-population";
import { populationNote } from "~/components/population-note";
import { MULTIPLICITY_WORDS, treatmentTestWords } from "~/components/treatment-effect";
import {
  getRerun,
  sensitivityReruns,
  storedRerunDocument,
  type RerunDocument,
} from "../reruns/reruns.server";
import { rerunTable } from "../reruns/what-if.server";
import { getStudyOr404 } from "../studies.server";
import {
  NARRATIVE_SECTIONS,
  SECTION_TITLES,
  type AppendixContent,
  type AppendixSection,
  type Block,
  type NarrativeSection,
} from "~/shared/appendix-content";
import { redaction, subjectColumnOf, type Redaction } from "../redaction.server";
import { methodsProse } from "./methods";
import { coxResultBlocks } from "./cox-content";
import { analysedWords, repeatedResultBlocks, subjectsAnalysed } from "./repeated-content";
import { currentNarratives, type Narrative } from "./narratives.server";
import {
  REPRODUCTION_FINDING_LABEL,
  reproductionBlocks,
  reproductionCheckRows,
} from "./reproduction-content";

export type AppendixScope =
  { kind: "rerun"; rerunId: string } | { kind: "plan_version"; planVersionId: string };

/** Figure width and plot height in CSS pixels: fits the printed text width at 2× resolution. */
const FIGURE_SIZE = { width: 560, height: 230 };

/** The outcome of a check in words, with the count of subjects beyond the threshold where there is one. */
export function outcomeInWords(c: CheckOutcome, n: number, redact: Redaction): string {
  if (c.outcome === "not_computed")
    return `Not computed. ${redact.countOnly(c.summary).replace(/^Not computed:?\s*/i, "")}`.trim();
  const count = c.flagged?.length ?? 0;
  if (c.flagged)
    return c.outcome === "finding"
      ? `${CHECK_OUTCOME.finding.word}: ${count} of ${n} subjects beyond the threshold`
      : `${CHECK_OUTCOME.within.word}: no subject beyond the threshold`;
  return `${CHECK_OUTCOME[c.outcome].word}: ${redact
    .countOnly(c.summary)
    .replace(/\.$/, "")
    .replace(/^The test/, "the test")}`;
}

interface RerunPart {
  rerunId: string;
  modelKey: string;
  modelTitle: string;
  doc: RerunDocument;
  dataset: { name: string; version: number; sha256: string; versionId: string };
  resultSha256: string;
  signedAt: string;
  signatures: { signerName: string; meaning: string; signedAt: string; authenticatedAt: string }[];
  findings: Awaited<ReturnType<typeof findingsOf>>;
  otherDeviations: Awaited<ReturnType<typeof deviationLog>>;
  sensitivity: { label: string; prespecified: boolean; doc: RerunDocument }[];
  planned: Awaited<ReturnType<typeof getPlannedModel>>;
  labels: Record<string, string | null>;
  table: { columns: Record<string, string[]>; rowNumbers: number[] };
  /**
   * Subject ids stay out of the appendix: it is read by sponsor readers, who see influential
   * subjects by count and rank only (redaction.server.ts, for a viewer who does not see subjects).
   */
  redact: Redaction;
}

/** The signed primary reruns of the scope, in plan order; 404 or 409 with a sentence otherwise. */
export async function signedRerunIds(
  studyId: string,
  scope: AppendixScope,
): Promise<{ planVersionId: string; rerunIds: string[] }> {
  if (scope.kind === "rerun") {
    const r = await getRerun(studyId, scope.rerunId);
    if (r.rerun.kind !== "primary")
      throw data(
        { message: "Choose the primary rerun: its sensitivity analyses are part of its appendix." },
        { status: 409 },
      );
    if (!r.rerun.signedAt)
      throw data(
        { message: "This rerun is not signed yet. Only signed reruns go into the appendix." },
        { status: 409 },
      );
    return { planVersionId: r.rerun.planVersionId, rerunIds: [r.rerun.id] };
  }
  await getPlanVersion(studyId, scope.planVersionId);
  const rows = await db
    .select({ id: t.reruns.id })
    .from(t.reruns)
    .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .where(
      and(
        eq(t.reruns.studyId, studyId),
        eq(t.reruns.planVersionId, scope.planVersionId),
        eq(t.reruns.kind, "primary"),
        isNotNull(t.reruns.signedAt),
      ),
    )
    .orderBy(asc(t.plannedModels.position), asc(t.reruns.signedAt));
  if (rows.length === 0)
    throw data(
      { message: "This plan version has no signed rerun yet. Only signed reruns go into the appendix." },
      { status: 409 },
    );
  return { planVersionId: scope.planVersionId, rerunIds: rows.map((r) => r.id) };
}

async function loadPart(studyId: string, rerunId: string): Promise<RerunPart> {
  const r = await getRerun(studyId, rerunId);
  if (!r.doc || !r.rerun.signedAt || !r.rerun.resultSha256)
    throw data({ message: "Only signed reruns go into the appendix." }, { status: 409 });
  const [signatures, findings, log, children, planned, locked] = await Promise.all([
    signaturesOf(rerunId),
    findingsOf(rerunId),
    deviationLog(studyId),
    sensitivityReruns(rerunId),
    getPlannedModel(r.rerun.plannedModelId),
    loadLockedTable(r.dataset.versionId),
  ]);
  const labels = Object.fromEntries((locked.columns as ColumnMeta[]).map((c) => [c.name, c.label]));
  const sensitivity = await Promise.all(
    children
      .filter((c) => c.status === "completed" && c.resultSha256 && c.publishedAt)
      .map(async (c) => ({
        label: c.label ?? "Sensitivity analysis",
        prespecified: c.prespecified,
        doc: (await storedRerunDocument(c)) as RerunDocument,
      })),
  );
  const idColumn = subjectColumnOf(r.doc);
  const redact = redaction(
    false,
    [r.doc, ...sensitivity.map((x) => x.doc)],
    idColumn ? (locked.table.columns[idColumn] ?? []) : [],
  );
  return {
    rerunId,
    modelKey: r.model.key,
    modelTitle: r.model.title,
    doc: r.doc,
    dataset: r.dataset,
    resultSha256: r.rerun.resultSha256,
    signedAt: r.rerun.signedAt,
    signatures,
    findings,
    otherDeviations: log.filter((d) => d.rerun?.id === rerunId && !d.findingId),
    sensitivity: sensitivity.map((x) => ({ ...x, label: redact.text(x.label) })),
    planned,
    labels,
    table: rerunTable(r.doc, locked.table),
    redact,
  };
}

function counter() {
  let table = 0;
  let figure = 0;
  return { table: () => ++table, figure: () => ++figure };
}

function narrativeBlock(section: NarrativeSection, n: Narrative | undefined): Block[] {
  if (!n || !n.body.trim()) return [];
  const paragraphs = n.body
    .split(/\n\s*\n/)
    .map((p) => p.replace(/\s+/g, " ").trim())
    .filter(Boolean);
  return [
    { kind: "narrative", section, paragraphs, version: n.version, author: n.authorName, at: n.createdAt },
  ];
}

const modelHeading = (p: RerunPart, many: boolean): Block[] =>
  many ? [{ kind: "heading", text: `${p.modelTitle} (${p.modelKey})` }] : [];

function figureBlocks(p: RerunPart, next: ReturnType<typeof counter>): Block[] {
  const blocks: Block[] = [];
  for (const w of figureListOf(p.doc)) {
    let m: ReturnType<typeof figureModule> | null = null;
    let d: FigureData;
    try {
      // a figure whose module is not registered is unavailable too (figureModule says so)
      m = figureModule(w.figure);
      d = figureData(p.doc, w.figure, { term: w.term, withSubjectIds: false, table: p.table });
    } catch (e) {
      if (!(e instanceof FigureUnavailableError)) throw e;
      blocks.push({
        kind: "paragraph",
        text: `${m?.words.caption ?? `The ${w.figure} figure`}${w.term ? ` for ${w.term}` : ""}: not drawn, because ${e.message}.`,
      });
      continue;
    }
    const related = p.doc.checks.filter((c) => checksOfFigure(w.figure).includes(c.key));
    const checkWords = related
      .map((c) => `${c.label}: ${outcomeInWords(c, subjectsAnalysed(p.doc.result), p.redact).toLowerCase()}`)
      .join("; ");
    const caption = `${m.words.caption}${w.term ? ` for ${p.labels[w.term] ? `${p.labels[w.term]} (${w.term})` : w.term}` : ""}, ${p.modelTitle}`;
    const alt =
      `${caption}: ${m.words.shows}, for ${analysedWords(p.doc.result)}. A healthy picture shows ${m.words.healthy}. ` +
      m.marked(d) +
      (checkWords ? ` Related checks: ${checkWords}.` : "");
    blocks.push({
      kind: "figure",
      key: `${w.figure}${w.term ? `:${w.term}` : ""}:${p.rerunId}`,
      number: next.figure(),
      caption,
      alt,
      spec: figureSpec(d, { ...FIGURE_SIZE, forPrint: true }),
    });
  }
  return blocks;
}

/** The estimate column's heading of the sensitivity table: "Ratio" for ratios, "Difference" for differences. */
function sensitivityHeading(labels: readonly string[]): string {
  const headings = new Set(labels.map((l) => contrastWords(l).heading));
  return headings.size === 1 ? [...headings][0] : "Estimate";
}

/** Builds the whole appendix. `narratives` defaults to the current stored version of each section. */
/** Category, impact on the treatment conclusion and action taken, in one cell of the deviation log. */
function assessmentWords(
  category: keyof typeof CATEGORIES,
  impact: keyof typeof IMPACTS,
  action: string,
): string {
  return `${CATEGORIES[category]}; impact: ${IMPACTS[impact].toLowerCase()}; action: ${(ACTIONS[action as keyof typeof ACTIONS] ?? action).toLowerCase()}`;
}

export async function buildAppendixContent(
  studyId: string,
  scope: AppendixScope,
  narratives?: Map<NarrativeSection, Narrative>,
): Promise<AppendixContent> {
  const study = await getStudyOr404(studyId);
  const { planVersionId, rerunIds } = await signedRerunIds(study.id, scope);
  const plan = await getPlanVersion(study.id, planVersionId);
  const parts: RerunPart[] = [];
  for (const id of rerunIds) parts.push(await loadPart(study.id, id));
  const notes = narratives ?? (await currentNarratives(study.id, planVersionId));
  const many = parts.length > 1;
  const next = counter();
  const issuedAt =
    parts
      .flatMap((p) => p.signatures.map((s) => s.signedAt))
      .sort()
      .at(-1) ?? parts[0].signedAt;
  const caution = parts[0].doc.caution;
  const pv = plan.version;
  const planLine = `${pv.title}, version ${pv.version}${pv.approvedAt ? `, approved ${utc(pv.approvedAt)}${plan.approverName ? ` by ${plan.approverName}` : ""}` : ""}`;

  const datasets = [...new Map(parts.map((p) => [p.dataset.versionId, p.dataset])).values()];
  const facts: { label: string; value: string }[] = [
    { label: "Study", value: `${study.code}: ${study.title}` },
    { label: "Sponsor", value: study.sponsor },
    { label: "Analysis plan", value: planLine },
    ...(pv.sapName
      ? [
          {
            label: "Statistical analysis plan",
            value: `${pv.sapName}${pv.sapVersion ? `, version ${pv.sapVersion}` : ""}${pv.sapDate ? `, ${pv.sapDate}` : ""}`,
          },
        ]
      : []),
    ...datasets.flatMap((d) => [
      { label: "Dataset", value: `${d.name}, locked version ${d.version}` },
      { label: `SHA-256 of ${d.name} v${d.version}`, value: d.sha256 },
    ]),
    {
      label: "Statistics engine",
      value: `Plumbline engine ${[...new Set(parts.map((p) => p.doc.engineVersion))].join(", ")}`,
    },
    ...parts.map((p) => ({ label: `Result SHA-256, ${p.modelKey}`, value: p.resultSha256 })),
    { label: "Date", value: `${utc(issuedAt)} (latest signature)` },
    ...parts.flatMap((p) =>
      p.signatures.map((s) => ({
        label: many ? `Signed, ${p.modelKey}` : "Signed",
        value: `${s.signerName}, ${s.meaning.toLowerCase()}, ${utc(s.signedAt)}`,
      })),
    ),
  ];

  const sections: AppendixSection[] = [];
  sections.push({ key: "caution", title: "Caution", blocks: [{ kind: "caution", text: caution }] });

  sections.push({
    key: "introduction",
    title: SECTION_TITLES.introduction,
    blocks: [
      {
        kind: "paragraph",
        text:
          `This appendix documents the rerun of ${many ? `${parts.length} planned models` : "the planned model"} of analysis plan version ${pv.version} on the locked data of study ${study.code}: ` +
          "the statistical methods as planned, the results, the diagnostic checks the plan committed to, the diagnostic figures, the deviations from the plan with their assessments and signatures, and the sensitivity analyses. " +
          "Every number comes from the signed results; the dataset and result hashes on the title page identify them.",
      },
      ...narrativeBlock("introduction", notes.get("introduction")),
    ],
  });

  const methods: Block[] = [];
  for (const p of parts) {
    const prose = methodsProse({
      title: p.planned.title,
      datasetName: p.planned.datasetName,
      population: populationOf(p.planned),
      spec: p.planned.spec,
      checks: p.planned.checks,
      sensitivity: p.planned.sensitivity,
      labels: p.labels,
      meansWeighting: p.doc.result.kind === "linear" ? p.doc.result.adjustedMeansWeighting : null,
      sap: { name: pv.sapName, version: pv.sapVersion, date: pv.sapDate },
    });
    const rows = p.doc.rows;
    methods.push(
      ...modelHeading(p, many),
      ...prose.paragraphs.map((text): Block => ({ kind: "paragraph", text })),
      { kind: "bullets", items: prose.checks },
      ...(prose.sensitivity.length
        ? [
            { kind: "paragraph", text: "Sensitivity analyses pre-specified in the plan:" } as Block,
            { kind: "bullets", items: prose.sensitivity } as Block,
          ]
        : []),
      {
        kind: "paragraph",
        text:
          `Data provenance: ${p.dataset.name} locked version ${p.dataset.version} (SHA-256 ${p.dataset.sha256}). Of ${rows.inFile} records in the file, ${rows.outsidePopulation} were outside the analysis population${populationNote(populationStepsOf(p.doc))}, ` +
          `${rows.excludedByOption} were excluded by the analysis options and ${rows.missingCells} had a missing value in a model term; ${rows.used} were analysed. ` +
          `Computed by the Plumbline statistics engine ${p.doc.engineVersion}; result SHA-256 ${p.resultSha256}.`,
      },
    );
  }
  sections.push({
    key: "methods",
    title: SECTION_TITLES.methods,
    blocks: [...methods, ...narrativeBlock("methods", notes.get("methods"))],
  });

  const results: Block[] = [];
  for (const p of parts) {
    if (p.doc.result.kind === "cox") {
      results.push(...modelHeading(p, many), ...coxResultBlocks(p.doc.result, p.rerunId, p.modelTitle, next));
      continue;
    }
    if (p.doc.result.kind === "repeated") {
      results.push(
        ...modelHeading(p, many),
        ...repeatedResultBlocks(p.doc.result, p.rerunId, p.modelTitle, next),
      );
      continue;
    }
    const r = p.doc.result;
    results.push(
      ...modelHeading(p, many),
      { kind: "paragraph", text: `${r.n} subjects analysed; ${familyWithLink(r.family, r.link)}.` },
      {
        kind: "table",
        key: `fit:${p.rerunId}`,
        number: next.table(),
        caption: `Fit of the model, ${p.modelTitle}`,
        columns: [{ label: "Quantity" }, { label: "Value" }],
        rows: fitStatisticRows(fitFactsOf(r)).map((row) => [row.label, row.value]),
      },
      {
        kind: "table",
        key: `coefficients:${p.rerunId}`,
        number: next.table(),
        caption: `Estimated coefficients, ${p.modelTitle}`,
        columns: [
          { label: "Coefficient" },
          { label: "Estimate", numeric: true },
          { label: "SE", numeric: true },
          { label: r.kind === "linear" ? "t" : `Wald ${r.statisticName}`, numeric: true },
          { label: "p", numeric: true },
          { label: "95% CI", numeric: true },
        ],
        rows: r.coefficients.map((c) => [
          c.name,
          fmt(c.estimate),
          fmt(c.se),
          fmt(c.statistic, 2),
          fmtP(c.p),
          fmtCi(c.lower, c.upper),
        ]),
        note:
          r.kind === "linear"
            ? `Model-based standard errors; t on ${r.dfResidual} residual degrees of freedom.`
            : "Model-based standard errors, on the scale of the linear predictor.",
      },
    );
    if (r.kind === "linear" && r.adjustedMeans) {
      results.push({
        kind: "table",
        key: `adjusted-means:${p.rerunId}`,
        number: next.table(),
        caption: `Adjusted means of ${r.spec.response} by arm, ${p.modelTitle}`,
        columns: [
          { label: "Arm" },
          { label: "Adjusted mean", numeric: true },
          { label: "SE", numeric: true },
          { label: "95% CI", numeric: true },
          { label: "HC3 95% CI", numeric: true },
        ],
        rows: r.adjustedMeans.map((m) => [
          m.level,
          fmt(m.estimate),
          fmt(m.se),
          fmtCi(m.lower, m.upper),
          fmtCi(m.hc3.lower, m.hc3.upper),
        ]),
        note: `Covariates at their mean; categorical covariates weighted ${r.adjustedMeansWeighting === "proportional" ? "in proportion to their frequencies" : "equally"}. HC3: heteroscedasticity-consistent (sandwich) standard errors.`,
      });
    }
    const contrasts = contrastsOf(p.doc);
    const effect = treatmentEffectOf(p.doc);
    // named as on the results page: HC3 for a linear model, the robust (Ye et al.) variance for a GLM's marginal contrasts
    const robust = r.kind === "linear" ? "HC3" : "Robust";
    if (contrasts.length) {
      const adjusted = effect.multiplicity !== "none" ? MULTIPLICITY_WORDS[effect.multiplicity] : null;
      results.push({
        kind: "table",
        key: `contrasts:${p.rerunId}`,
        number: next.table(),
        caption: `Treatment contrasts ${effect.contrastSet === "pairwise" ? "between every pair of arms" : "against the reference arm"}, ${p.modelTitle}`,
        columns: [
          { label: "Comparison" },
          { label: r.kind === "linear" ? "Difference" : "Estimate", numeric: true },
          { label: "SE", numeric: true },
          { label: "95% CI", numeric: true },
          { label: r.kind === "linear" ? "t" : "z", numeric: true },
          { label: "p", numeric: true },
          ...(adjusted ? [{ label: `p adjusted (${adjusted})`, numeric: true }] : []),
          { label: `${robust} SE`, numeric: true },
          { label: `${robust} 95% CI`, numeric: true },
          { label: `${robust} p`, numeric: true },
        ],
        rows: contrasts.map((c) => [
          c.label,
          fmt(c.estimate),
          `${fmt(c.se)}${c.seScale === "log" ? " (log)" : ""}`,
          fmtCi(c.lower, c.upper),
          fmt(c.statistic),
          fmtP(c.p),
          ...(adjusted ? [fmtP(c.pAdjusted)] : []),
          c.hc3 ? fmt(c.hc3.se) : "—",
          c.hc3 ? fmtCi(c.hc3.lower, c.hc3.upper) : "does not apply",
          c.hc3 ? fmtP(c.hc3.p) : "—",
        ]),
        note:
          (r.kind === "linear"
            ? "Differences in adjusted means with model-based and HC3 heteroscedasticity-consistent (sandwich) standard errors."
            : "Marginal (standardized) contrasts with delta-method standard errors (Ge et al. 2011) and the robust standard errors valid under misspecification (Ye et al. 2023). A ratio's SE, marked (log), and its statistic are those of the log ratio; its estimate and interval are ratios, the interval computed on the log scale.") +
          (adjusted
            ? ` p-values adjusted for multiplicity by the ${adjusted} method${r.kind === "glm" ? " within each measure" : ""}.`
            : " p-values not adjusted for multiplicity.") +
          (effect.test ? ` ${treatmentTestWords(effect.test)}` : ""),
      });
    }
    if (r.kind === "glm" && r.ratios && r.ratioName) {
      const ratioName = r.ratioName;
      results.push({
        kind: "table",
        key: `ratios:${p.rerunId}`,
        number: next.table(),
        caption: `${ratioName[0].toUpperCase()}${ratioName.slice(1)}s conditional on the covariates, ${p.modelTitle}`,
        columns: [
          { label: "Coefficient" },
          { label: ratioName[0].toUpperCase() + ratioName.slice(1), numeric: true },
          { label: "Wald 95% CI", numeric: true },
          { label: "Profile 95% CI", numeric: true },
        ],
        rows: r.ratios.map((x) => [
          x.name,
          fmt(x.ratio),
          fmtCi(x.lower, x.upper),
          x.profileLower == null || x.profileUpper == null ? "—" : fmtCi(x.profileLower, x.profileUpper),
        ]),
        note: "Exponentiated coefficients with Wald and profile-likelihood 95% intervals; each holds the other covariates fixed, unlike the marginal contrasts above.",
      });
    }
  }
  sections.push({
    key: "results",
    title: SECTION_TITLES.results,
    blocks: [...results, ...narrativeBlock("results", notes.get("results"))],
  });

  const checks: Block[] = [];
  for (const p of parts) {
    checks.push(
      ...modelHeading(p, many),
      {
        kind: "table",
        key: `checks:${p.rerunId}`,
        number: next.table(),
        caption: `Diagnostic checks of the plan and their outcome, ${p.modelTitle}`,
        columns: [{ label: "Check" }, { label: "Statistic" }, { label: "Threshold" }, { label: "Outcome" }],
        rows: [
          ...p.doc.checks.map((c) => [
            c.label,
            p.redact.countOnly(c.statistic),
            c.threshold,
            outcomeInWords(c, subjectsAnalysed(p.doc.result), p.redact),
          ]),
          ...reproductionCheckRows(p.doc),
        ],
        note: [
          "Subjects beyond a threshold are counted, not named. Thresholds as the plan states them (n subjects, p coefficients).",
          ...p.doc.checks.flatMap((c) => {
            const f = CHECK_BY_KEY.get(c.key)?.formula;
            return f ? [`${f.name}: ${f.words}.`] : [];
          }),
        ].join(" "),
      },
      ...reproductionBlocks(p.doc, p.rerunId, p.modelTitle, next.table),
    );
  }
  sections.push({
    key: "checks",
    title: SECTION_TITLES.checks,
    blocks: [...checks, ...narrativeBlock("checks", notes.get("checks"))],
  });

  const figures: Block[] = [];
  for (const p of parts) figures.push(...modelHeading(p, many), ...figureBlocks(p, next));
  sections.push({
    key: "figures",
    title: SECTION_TITLES.figures,
    blocks: [...figures, ...narrativeBlock("figures", notes.get("figures"))],
  });

  const deviations: Block[] = [];
  for (const p of parts) {
    const rows = [
      ...p.findings.map((f) => [
        CHECK_BY_KEY.get(f.checkKey as never)?.label ??
          (f.kind === "not_estimable"
            ? "Estimability"
            : f.checkKey === "reproduction"
              ? REPRODUCTION_FINDING_LABEL
              : f.checkKey),
        // the Check column names the check: the finding says what it found, without the label again
        p.redact.countOnly(summaryAfterLabel(CHECK_BY_KEY.get(f.checkKey as never)?.label ?? "", f.summary)),
        f.assessment
          ? assessmentWords(f.assessment.category, f.assessment.impact, f.assessment.action)
          : "Not assessed",
        f.assessment ? p.redact.text(f.assessment.rationale, f.checkKey) : "—",
        f.assessment ? `${f.assessment.recordedByName ?? "unknown"}, ${utc(f.assessment.recordedAt)}` : "—",
      ]),
      ...p.otherDeviations.map((d) => [
        "Recorded deviation",
        "No check produced this deviation.",
        assessmentWords(d.category, d.impact, d.action),
        p.redact.text(d.rationale),
        `${d.recordedByName ?? "unknown"}, ${utc(d.recordedAt)}`,
      ]),
    ];
    deviations.push(...modelHeading(p, many));
    if (rows.length === 0)
      deviations.push({ kind: "paragraph", text: "No deviation from the plan was recorded for this rerun." });
    else
      deviations.push({
        kind: "table",
        key: `deviations:${p.rerunId}`,
        number: next.table(),
        caption: `Deviation log with assessments, ${p.modelTitle}`,
        columns: [
          { label: "Check" },
          { label: "Finding", prose: true },
          { label: "Assessment" },
          { label: "Rationale", prose: true },
          { label: "Assessed by" },
        ],
        rows,
        note: "Assessment: category; impact on the treatment conclusion; action taken.",
      });
    deviations.push({
      kind: "table",
      key: `signatures:${p.rerunId}`,
      number: next.table(),
      caption: `Electronic signatures, ${p.modelTitle}`,
      columns: [{ label: "Signer" }, { label: "Meaning" }, { label: "Signed" }, { label: "Authenticated" }],
      rows: p.signatures.map((s) => [s.signerName, s.meaning, utc(s.signedAt), utc(s.authenticatedAt)]),
      note: "Signing publishes the rerun and its sensitivity analyses to the study's sponsor readers.",
    });
  }
  sections.push({
    key: "deviations",
    title: SECTION_TITLES.deviations,
    blocks: [...deviations, ...narrativeBlock("deviations", notes.get("deviations"))],
  });

  const sensitivity: Block[] = [];
  for (const p of parts) {
    sensitivity.push(...modelHeading(p, many));
    const analyses = [
      { label: "Primary analysis as planned", prespecified: true, primary: true, doc: p.doc },
      ...p.sensitivity.map((s) => ({ ...s, primary: false })),
    ];
    if (analyses.length === 1) {
      sensitivity.push({ kind: "paragraph", text: "No sensitivity analysis was run for this rerun." });
      continue;
    }
    const labels = reportedContrasts(p.doc).map((c) => c.label);
    const rows: string[][] = [];
    for (const label of labels) {
      for (const a of analyses) {
        const c = reportedContrasts(a.doc).find((x) => x.label === label);
        if (c)
          rows.push([
            a.label,
            a.primary ? "Primary" : a.prespecified ? "Pre-specified" : "Not pre-specified",
            label,
            fmt(c.estimate),
            fmtCi(c.lower, c.upper),
            fmtP(c.p),
          ]);
      }
    }
    sensitivity.push({
      kind: "table",
      key: `sensitivity:${p.rerunId}`,
      number: next.table(),
      caption: `Treatment contrasts across the analyses, ${p.modelTitle}`,
      // a ratio is headed "Ratio", a difference "Difference" (both, when the table mixes them, "Estimate")
      columns: [
        { label: "Analysis" },
        { label: "Kind" },
        { label: "Comparison" },
        { label: sensitivityHeading(labels), numeric: true },
        { label: "95% CI", numeric: true },
        { label: "p", numeric: true },
      ],
      rows,
      note: "Robust-error analyses report HC3 intervals; the others model-based intervals.",
    });
    for (const label of labels) {
      const forest: ForestRow[] = analyses.flatMap((a) => {
        const c = reportedContrasts(a.doc).find((x) => x.label === label);
        return c
          ? [
              {
                label: a.label,
                estimate: c.estimate,
                lower: c.lower,
                upper: c.upper,
                prespecified: a.prespecified,
                primary: a.primary,
              },
            ]
          : [];
      });
      const caption = `Treatment contrast ${label} across the analyses, ${p.modelTitle}`;
      sensitivity.push({
        kind: "figure",
        key: `forest:${label}:${p.rerunId}`,
        number: next.figure(),
        caption,
        alt: forestAlt(
          caption,
          label,
          forestPoints(forest).map((f) => ({
            label: f.label,
            estimate: fmt(f.estimate, 2),
            interval: fmtCi(f.lower, f.upper, 2),
          })),
        ),
        // the analysis labels, wrapped, take about 210 px beside the plot: a narrower plot keeps the text legible in print
        spec: forestSpec(forest, label, { width: 360, forPrint: true }),
      });
    }
  }
  sections.push({
    key: "sensitivity",
    title: SECTION_TITLES.sensitivity,
    blocks: [...sensitivity, ...narrativeBlock("sensitivity", notes.get("sensitivity"))],
  });

  // Everything but the medical writer's own narrative is checked for subject ids before it leaves.
  for (const p of parts)
    p.redact.assertClean(
      [facts, sections.map((x) => x.blocks.filter((b) => b.kind !== "narrative"))],
      "The appendix",
    );
  return {
    scope,
    studyId: study.id,
    planVersionId,
    rerunIds,
    title: `Statistical appendix: ${pv.title}, version ${pv.version}`,
    runningHeader: `${study.code} · Statistical appendix · Plan version ${pv.version}`,
    issuedAt,
    caution,
    titlePage: {
      studyCode: study.code,
      studyTitle: study.title,
      sponsor: study.sponsor,
      planVersion: planLine,
      facts,
    },
    sections,
  };
}

export { NARRATIVE_SECTIONS };

/** The study's signed primary reruns, newest signature first, for choosing an appendix's scope. */
export async function signedPrimaryReruns(studyId: string) {
  const rows = await db
    .select({
      id: t.reruns.id,
      signedAt: t.reruns.signedAt,
      planVersionId: t.reruns.planVersionId,
      planVersion: t.planVersions.version,
      modelTitle: t.plannedModels.title,
    })
    .from(t.reruns)
    .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .innerJoin(t.planVersions, eq(t.planVersions.id, t.reruns.planVersionId))
    .where(and(eq(t.reruns.studyId, studyId), eq(t.reruns.kind, "primary"), isNotNull(t.reruns.signedAt)));
  return rows
    .map((r) => ({ ...r, signedAt: r.signedAt ?? "" }))
    .sort((a, b) => (a.signedAt < b.signedAt ? 1 : -1));
}
