/**
 * What a results page shows of a repeated-measures (MMRM) rerun: the records and subjects used, the
 * covariance structure used against the planned one with every attempt and why it was not used,
 * the likelihood, AIC and BIC, the test of the structure against unstructured, the visits'
 * covariance and correlation, coefficients and adjusted means with their df, the treatment
 * contrasts per visit as the plan states them, the F tests with the df method named, the subjects
 * per visit and arm, the checks and the figures. No observation-level arrays (the figures fetch
 * their rows from their own route); subject ids in check texts only for people who may see
 * subject-level data (checkView, as for the other kinds).
 */
import { plannedVisitContrasts } from "~/engine/repeated/repeated-model";
import type { RepeatedResult, RepeatedTest } from "~/engine/repeated/repeated-model";
import {
  COVARIANCE_STRUCTURE_DESCRIPTIONS as STRUCTURE_WORDS,
  REPEATED_DF_WORDS as DF_METHOD_WORDS,
  REPEATED_METHOD_WORDS as METHOD_WORDS,
} from "~/engine/repeated/repeated-names";
import { repeatedFigureList } from "~/figures/repeated/repeated-figure-list";
import type { Redaction } from "../redaction.server";
import { populationStepsOf } from "./rerun-population";
import { checkView, reproductionView } from "./check-view.server";
import { treatmentEffectOf } from "./treatment-effect-of";
import type { ViewDocument } from "./page-document";

const test = (name: string, t: RepeatedTest | null) =>
  t
    ? {
        name,
        hypothesis: t.hypothesis,
        statistic: t.statistic,
        numeratorDf: t.numeratorDf,
        denominatorDf: t.denominatorDf,
        p: t.p,
      }
    : null;

/** The arms in the order of the plan: the reference first, then as the adjusted means list them. */
function armsOf(r: RepeatedResult): string[] {
  const levels = [...new Set((r.adjustedMeans?.means ?? []).map((m) => m.level))];
  const term = r.spec.terms.find((t) => "variable" in t && t.variable === r.spec.treatment);
  const ref = term && "reference" in term ? term.reference : undefined;
  return ref && levels.includes(ref) ? [ref, ...levels.filter((l) => l !== ref)] : levels;
}

export function repeatedRerunView(doc: ViewDocument, r: RepeatedResult, redact: Redaction) {
  const c = r.covariance;
  const am = r.adjustedMeans;
  const effect = treatmentEffectOf(doc);
  const visits = [...c.visits];
  const arms = armsOf(r);
  const byVisit = (a: { visit: string }, b: { visit: string }) =>
    visits.indexOf(a.visit) - visits.indexOf(b.visit);
  const figures = repeatedFigureList(r);
  const contrasts = plannedVisitContrasts(r);
  return {
    kind: "repeated" as const,
    description: redact.text(doc.description),
    rows: doc.rows,
    population: populationStepsOf(doc),
    method: `Mixed model for repeated measures by ${METHOD_WORDS[r.method]}: the visits of a subject correlated through the covariance structure used, no random effects; ${DF_METHOD_WORDS[r.dfMethod]} degrees of freedom${r.dfMethod === "kenward-roger" ? " with the Kenward–Roger adjusted covariance" : ""}.`,
    response: r.spec.response,
    subjectColumn: r.spec.repeated.subject,
    visitColumn: r.spec.repeated.visit,
    treatment: am?.treatment ?? r.spec.treatment ?? null,
    /** Records used, and the subjects they belong to. */
    n: r.n,
    subjects: r.subjectCount,
    likelihood: r.method === "reml" ? ("REML" as const) : ("ML" as const),
    dfMethod: DF_METHOD_WORDS[r.dfMethod],
    covariance: {
      planned: STRUCTURE_WORDS[c.planned],
      used: STRUCTURE_WORDS[c.structure],
      asPlanned: c.structure === c.planned,
      attempts: c.attempts.map((a) => ({
        structure: STRUCTURE_WORDS[a.structure],
        used: a.reason === null && a.structure === c.structure,
        converged: a.converged,
        iterations: a.iterations,
        reason: a.reason ? redact.text(a.reason) : null,
      })),
      converged: c.converged,
      iterations: c.iterations,
      logLik: c.logLik,
      aic: c.aic,
      bic: c.bic,
      parameterCount: c.parameterCount,
      visits,
      matrix: c.matrix,
      correlation: c.correlation,
    },
    structureTest: r.structureTest
      ? { ...r.structureTest, reason: r.structureTest.reason ? redact.text(r.structureTest.reason) : null }
      : null,
    coefficientCovarianceType: r.coefficientCovarianceType,
    coefficients: r.coefficients.map((x) => ({
      name: x.name,
      estimate: x.estimate,
      se: x.se,
      df: x.df,
      statistic: x.statistic,
      p: x.p,
      lower: x.lower,
      upper: x.upper,
    })),
    arms,
    meansWeighting: am?.weighting ?? null,
    visitMeans: am
      ? [...am.means].sort((a, b) => byVisit(a, b) || arms.indexOf(a.level) - arms.indexOf(b.level))
      : [],
    /** The plan's treatment contrasts at every visit (the comparison of analyses reads those at the primary visit, contrastsOf). */
    visitContrasts: [...contrasts].sort(byVisit).map((x) => ({
      label: x.label,
      visit: x.visit,
      estimate: x.estimate,
      se: x.se,
      df: x.df,
      lower: x.lower,
      upper: x.upper,
      statistic: x.statistic,
      p: x.p,
      pAdjusted: x.pAdjusted ?? null,
    })),
    primaryVisit: r.influence.primaryVisit,
    treatmentEffect: effect,
    tests: [
      test(`Treatment (${am?.treatment ?? r.spec.treatment ?? "treatment"})`, r.tests.treatment),
      test("Treatment by visit", r.tests.treatmentByVisit),
    ].filter((t) => t !== null),
    testNotes: r.tests.notes,
    /** Subjects with a record at each visit, by arm (visits in order, arms as `arms`). */
    counts: visits.map((visit) => ({
      visit,
      byArm: (arms.length ? arms : [null]).map(
        (arm) => r.counts.find((x) => x.visit === visit && x.level === arm)?.subjects ?? 0,
      ),
    })),
    influenceMethod: r.influence.method,
    figures,
    // a check's figure that this rerun cannot draw (the means of a model without a treatment) is not offered
    checks: doc.checks.map((x) => {
      const v = checkView(x, redact);
      return { ...v, figure: v.figure && figures.some((f) => f.figure === v.figure) ? v.figure : null };
    }),
    reproduction: reproductionView(doc),
    engineVersion: doc.engineVersion,
    caution: doc.caution,
  };
}

export type RepeatedRerunView = ReturnType<typeof repeatedRerunView>;
