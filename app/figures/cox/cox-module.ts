/** What the Cox figure modules share: the Cox result of a rerun and the subject-marking sentence. */
import { FigureUnavailableError, type FigureSource } from "../shared/source";
import type { CoxResult } from "~/engine/survival/cox-model";
import type { FigureKey } from "~/engine/checks";

/** The Cox result of a rerun; other models have figures of their own. */
export function coxResult(source: FigureSource, figure: FigureKey): CoxResult {
  if (source.result.kind !== "cox")
    throw new FigureUnavailableError(`the ${figure} figure is drawn for time-to-event (Cox) models only`);
  return source.result;
}

/** The alt text's sentence on a survival-curve figure: the arms, and the log-rank test when there is one. */
export function armsAndLogRank(
  arms: readonly string[],
  logRank: { statistic: number; df: number; p: number; stratified: boolean } | null,
): string {
  const words = `${arms.length} arm${arms.length === 1 ? "" : "s"} (${arms.join(", ")})`;
  if (!logRank) return `${words}.`;
  const p = logRank.p < 0.0001 ? "< 0.0001" : `= ${logRank.p.toFixed(4)}`;
  return `${words}. ${logRank.stratified ? "Stratified log-rank" : "Log-rank"} statistic ${logRank.statistic.toFixed(2)} on ${logRank.df} degrees of freedom, p ${p}.`;
}
