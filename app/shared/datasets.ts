/**
 * The dataset types the server hands to the dataset pages: column summaries, what changed
 * between versions, and identifier-screen hits as shown. Types only; the server computes them
 * (app/.server/datasets/column-summary.ts, diff.ts, datasets.server.ts).
 */

export type ColumnType = "number" | "text" | "date" | "datetime";

export interface ColumnMeta {
  name: string;
  label: string | null;
  type: ColumnType;
  nonMissing: number;
  missing: number;
  min?: number;
  max?: number;
  mean?: number;
  sd?: number;
  /**
   * Level counts: of a text column with at most MAX_LEVELS distinct values, and of a numeric
   * column of whole numbers with at most MAX_CODED_LEVELS distinct values (numeric codes; see
   * categorical-hint.ts).
   */
  levels?: { value: string; count: number }[];
  /** Earliest and latest value of a date or datetime column (ISO 8601 text). */
  earliest?: string;
  latest?: string;
}

/**
 * What changed between two versions of a dataset: columns added and removed, and rows added,
 * removed and changed, matched by the dataset's key.
 */
export interface ChangeSummary {
  againstVersion: number;
  keyColumns: string[];
  columnsAdded: string[];
  columnsRemoved: string[];
  rowsAdded: number;
  rowsRemoved: number;
  rowsChanged: number;
  rowsUnchanged: number;
  /** A few keys of each kind, to show what the counts mean. */
  examples: { added: string[]; removed: string[]; changed: { key: string; columns: string[] }[] };
}

export interface ScreenHitView {
  id: string;
  column: string;
  rule: string;
  ruleLabel: string;
  basis: "name" | "values";
  matches: number;
  maskedExamples: string[];
  resolution: "removed" | "not_identifier" | null;
  rationale: string | null;
  resolvedBy: string | null;
  resolvedAt: string | null;
  /** The version where this resolution was first recorded, when it was carried forward. */
  carriedFromVersion: number | null;
}
