/**
 * What a sponsor report shows of a repeated-measures (MMRM) rerun: the headline contrasts at the
 * primary visit, the structure used against the planned one, and the results tables in the
 * appendix's own words (repeated-content.ts: one wording for both). Model-level numbers only;
 * the checks go through the report's redaction like every other model's.
 */
import type { RepeatedReportPart, TableBlock } from "~/shared/repeated-report";
import type { RepeatedResult } from "~/engine/repeated/repeated-model";
import {
  headlineSentence,
  repeatedMethodWords,
  repeatedResultBlocks,
  structureSentence,
} from "../appendix/repeated-content";
import type { Redaction } from "../redaction.server";
import { checkView, reproductionView, treatmentEffectOf } from "../reruns/rerun-view.server";
import type { RerunDocument } from "../reruns/reruns.server";

export function repeatedReportView(
  doc: RerunDocument,
  r: RepeatedResult,
  redaction: Redaction,
  rerunId: string,
) {
  let n = 0;
  const blocks = repeatedResultBlocks(r, rerunId, doc.plannedModel.title, { table: () => ++n });
  const repeated: RepeatedReportPart = {
    headline: headlineSentence(r),
    structure: structureSentence(r),
    tables: blocks.filter((b): b is TableBlock => b.kind === "table"),
  };
  return {
    results: {
      description: redaction.text(doc.description),
      method: repeatedMethodWords(r),
      rows: doc.rows,
      n: r.n,
      dfResidual: null,
      covarianceType: "model",
      kind: "repeated" as const,
      statisticName: "t" as const,
      fitStatistics: null,
      // the coefficients, with their df, are among the tables
      coefficients: [],
      adjustedMeans: null,
      adjustedMeansWeighting: null,
      contrasts: [],
      treatmentEffect: treatmentEffectOf(doc),
      cox: null,
      repeated,
    },
    checks: doc.checks.map((c) => checkView(c, redaction)),
    reproduction: reproductionView(doc),
  };
}
