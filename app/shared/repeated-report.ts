/** What a sponsor report shows of a repeated-measures (MMRM) rerun: plain data, made by the server, read by the page. */
import type { Block } from "./appendix-content";

export type TableBlock = Extract<Block, { kind: "table" }>;

export interface RepeatedReportPart {
  /** The contrasts at the primary visit in one sentence; null without a treatment. */
  headline: string | null;
  /** The covariance structure used, and why when it is not the planned one. */
  structure: string;
  /** The results tables in the appendix's words (fit, visit correlations, coefficients, means, contrasts, tests, subjects per visit). */
  tables: TableBlock[];
}
