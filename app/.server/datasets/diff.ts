/**
 * What changed between two versions of a dataset: columns added and removed, and rows added,
 * removed and changed, matched by the dataset's key.
 */
import type { ChangeSummary } from "../../shared/datasets";

export type { ChangeSummary };

export interface Comparable {
  names: string[];
  cells: string[][];
  keyColumns: string[];
}

const EXAMPLES = 5;

function keyOf(t: Comparable, key: string[]): (i: number) => string {
  const cols = key.map((k) => t.cells[t.names.indexOf(k)]);
  return cols.length === 1 ? (i) => cols[0][i] : (i) => cols.map((c) => c[i]).join(" / ");
}

export function summariseChanges(
  previous: Comparable & { version: number },
  next: Comparable,
): ChangeSummary {
  const columnsAdded = next.names.filter((n) => !previous.names.includes(n));
  const columnsRemoved = previous.names.filter((n) => !next.names.includes(n));
  const common = next.names.filter((n) => previous.names.includes(n));
  // Match by the new key when the old file has those columns too, else by the old key.
  const key = next.keyColumns.every((k) => previous.names.includes(k))
    ? next.keyColumns
    : previous.keyColumns.every((k) => next.names.includes(k))
      ? previous.keyColumns
      : [];
  const summary: ChangeSummary = {
    againstVersion: previous.version,
    keyColumns: key,
    columnsAdded,
    columnsRemoved,
    rowsAdded: 0,
    rowsRemoved: 0,
    rowsChanged: 0,
    rowsUnchanged: 0,
    examples: { added: [], removed: [], changed: [] },
  };
  const nPrev = previous.cells[0]?.length ?? 0;
  const nNext = next.cells[0]?.length ?? 0;
  const prevKey = key.length > 0 ? keyOf(previous, key) : (i: number) => String(i + 1);
  const nextKey = key.length > 0 ? keyOf(next, key) : (i: number) => String(i + 1);
  const prevIndex = new Map<string, number>();
  for (let i = 0; i < nPrev; i++) prevIndex.set(prevKey(i), i);
  const prevCols = common.map((n) => previous.cells[previous.names.indexOf(n)]);
  const nextCols = common.map((n) => next.cells[next.names.indexOf(n)]);
  const matched = new Set<string>();
  for (let i = 0; i < nNext; i++) {
    const k = nextKey(i);
    const j = prevIndex.get(k);
    if (j === undefined) {
      summary.rowsAdded++;
      if (summary.examples.added.length < EXAMPLES) summary.examples.added.push(k);
      continue;
    }
    matched.add(k);
    let changedColumns: string[] | null = null;
    for (let c = 0; c < common.length; c++) {
      if (prevCols[c][j] !== nextCols[c][i]) {
        if (summary.examples.changed.length >= EXAMPLES) {
          changedColumns = [];
          break;
        }
        (changedColumns ??= []).push(common[c]);
      }
    }
    if (changedColumns) {
      summary.rowsChanged++;
      if (changedColumns.length > 0) summary.examples.changed.push({ key: k, columns: changedColumns });
    } else summary.rowsUnchanged++;
  }
  for (const [k] of prevIndex) {
    if (matched.has(k)) continue;
    summary.rowsRemoved++;
    if (summary.examples.removed.length < EXAMPLES) summary.examples.removed.push(k);
  }
  return summary;
}
