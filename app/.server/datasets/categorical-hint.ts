/**
 * Numeric columns that look categorical: codes stored as numbers (a pooled site group coded
 * 701, 703, …, a visit number, a 0/1 flag). Entered as a continuous term such a column fits a
 * straight line through arbitrary codes and silently changes the model, so the plan editor asks
 * for an explicit choice (categorical or continuous) whenever one is used as a term, and the
 * server refuses a planned model without that choice.
 *
 * A numeric column looks categorical when
 *  - it holds whole numbers only, with 2 to MAX_CODED_LEVELS distinct values: codes, scores and
 *    visit numbers rarely have more, while a measurement with so few distinct whole numbers in a
 *    study's dataset is rare (and the choice is only asked, never made for the user); or
 *  - its name says flag, group or code, in the naming conventions of analysis datasets: a name
 *    ending FL (SAFFL), GRn, GRnN, GRP or GROUP (SITEGR1, AGEGR1N), CD or CODE (ARMCD), or the
 *    same words after an underscore (site_group, visit_code); or
 *  - its name is another column's name with N added (AVISITN beside AVISIT, TRT01PN beside
 *    TRT01P): the numeric twin of a text column, by the same conventions. A bare N suffix is not
 *    enough, since many measurement names end in N (HEMOGLOBIN); or
 *  - its label says flag, group, grouping, code or category as a word ("Pooled Site Group 1").
 */
import type { ColumnMeta } from "./column-summary";

/** At most this many distinct whole-number values make a numeric column look categorical. */
export const MAX_CODED_LEVELS = 12;

const CODE_NAME = /(FL|GR\d*N?|GRP|GROUP|CD|CODE)$|_(flag|group|grp|code|cd)$/i;
const CODE_LABEL = /\b(flag|group|grouping|code|category)\b/i;

type HintInput = Pick<ColumnMeta, "name" | "label" | "type" | "levels">;

/** Numeric column types (readers that declare integers may add an "integer" type). */
export const isNumericType = (type: string): boolean => type === "number" || type === "integer";

/**
 * Why each numeric column of a dataset looks categorical, by column name; columns not in the
 * map do not. The reason is said in words for the page and the editor.
 */
export function categoricalHints(columns: readonly HintInput[]): Map<string, string> {
  const names = new Set(columns.map((c) => c.name));
  const out = new Map<string, string>();
  for (const c of columns) {
    if (!isNumericType(c.type)) continue;
    const twin = /N$/i.test(c.name) && names.has(c.name.slice(0, -1)) ? c.name.slice(0, -1) : null;
    if (c.levels && c.levels.length >= 2 && c.levels.length <= MAX_CODED_LEVELS)
      out.set(c.name, `${c.levels.length} distinct whole-number values`);
    else if (CODE_NAME.test(c.name)) out.set(c.name, "its name says flag, group or code");
    else if (twin) out.set(c.name, `numeric codes of ${twin}`);
    else if (c.label && CODE_LABEL.test(c.label))
      out.set(c.name, `its label says ${(CODE_LABEL.exec(c.label) as RegExpExecArray)[1].toLowerCase()}`);
  }
  return out;
}

/** The columns with `looksCategorical` set to the reason, for pages and the plan editor. */
export function withCategoricalHints<T extends HintInput>(
  columns: readonly T[],
): (T & { looksCategorical?: string })[] {
  const hints = categoricalHints(columns);
  return columns.map((c) => (hints.has(c.name) ? { ...c, looksCategorical: hints.get(c.name) } : c));
}
