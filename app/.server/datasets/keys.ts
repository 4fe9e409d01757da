/**
 * The dataset's key: the column or columns that identify one record. Named by the uploader,
 * declared by Dataset-JSON's keySequence, or detected: a subject identifier column alone
 * (one record per subject), else the subject identifier with the visit or parameter columns
 * that make records unique, else the first complete column whose values are all distinct.
 */
import { isMissingCell } from "../../engine/data";

const SUBJECT_NAMES = /^(usubjid|subjid|subject|subject_?id|subj|patient_?id|pid|id)$/i;
const TIMING_NAMES =
  /^(paramcd|param|avisitn|avisit|visitnum|visit|atptn|atpt|adt|adtm|ady|timepoint|week|period|aperiod|seq|.*seq)$/i;

export type KeyOutcome = { ok: true; columns: string[] } | { ok: false; problems: string[] };

/** Rows sharing a key value, as pairs of row numbers (first seen, repeat). */
export function duplicateKeys(
  keyCells: string[][],
  rowNumbers: number[],
  limit = 5,
): { value: string[]; rows: [number, number] }[] {
  const seen = new Map<string, number>();
  const dups: { value: string[]; rows: [number, number] }[] = [];
  const n = keyCells[0]?.length ?? 0;
  for (let i = 0; i < n && dups.length < limit; i++) {
    const value = keyCells.map((c) => c[i]);
    const k = value.length === 1 ? value[0] : JSON.stringify(value);
    const first = seen.get(k);
    if (first === undefined) seen.set(k, i);
    else dups.push({ value, rows: [rowNumbers[first], rowNumbers[i]] });
  }
  return dups;
}

function missingIn(cells: string[]): number {
  for (let i = 0; i < cells.length; i++) if (isMissingCell(cells[i])) return i;
  return -1;
}

/**
 * `declared`: the key comes from the file itself (Dataset-JSON keySequence), where a key
 * column may be empty in some records (CDISC's own examples declare such keys); only its
 * uniqueness is then required.
 */
export function findKey(
  file: string,
  names: string[],
  cells: string[][],
  rowNumbers: number[],
  explicit: string[] | null,
  declared = false,
): KeyOutcome {
  const col = (name: string) => cells[names.indexOf(name)];
  if (explicit && explicit.length > 0) {
    const unknown = explicit.filter((k) => !names.includes(k));
    if (unknown.length > 0) {
      return {
        ok: false,
        problems: [
          `${file}: the key column${unknown.length > 1 ? "s" : ""} ${unknown.map((k) => `"${k}"`).join(", ")} ${unknown.length > 1 ? "are" : "is"} not in the file. Its columns are: ${names.join(", ")}.`,
        ],
      };
    }
    const problems: string[] = [];
    for (const k of declared ? [] : explicit) {
      const at = missingIn(col(k));
      if (at !== -1)
        problems.push(
          `${file}: key column "${k}", row ${rowNumbers[at]}: the key is missing. Every record needs its key.`,
        );
    }
    for (const d of duplicateKeys(explicit.map(col), rowNumbers)) {
      problems.push(
        `${file}: duplicate key: rows ${d.rows[0]} and ${d.rows[1]} both have ${explicit.map((k, i) => `${k} = "${d.value[i]}"`).join(", ")}. Each record must have its own key; remove the repeated record or name more key columns.`,
      );
    }
    return problems.length > 0 ? { ok: false, problems } : { ok: true, columns: explicit };
  }
  const subject = names.find((n) => SUBJECT_NAMES.test(n));
  if (subject) {
    const dups = duplicateKeys([col(subject)], rowNumbers, 1);
    if (dups.length === 0) return findKey(file, names, cells, rowNumbers, [subject]);
    const timing = names.filter((n) => TIMING_NAMES.test(n) && n !== subject);
    for (let size = 1; size <= timing.length; size++) {
      const candidate = [subject, ...timing.slice(0, size)];
      if (duplicateKeys(candidate.map(col), rowNumbers, 1).length === 0)
        return findKey(file, names, cells, rowNumbers, candidate);
    }
    return findKey(file, names, cells, rowNumbers, timing.length > 0 ? [subject, ...timing] : [subject]);
  }
  for (const name of names) {
    const c = col(name);
    if (missingIn(c) === -1 && duplicateKeys([c], rowNumbers, 1).length === 0)
      return { ok: true, columns: [name] };
  }
  return {
    ok: false,
    problems: [
      `${file}: Plumbline found no key: no subject identifier column (such as USUBJID or SUBJID) and no complete column with distinct values. Name the key columns on the upload form.`,
    ],
  };
}
