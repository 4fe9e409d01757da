/**
 * The records of a repeated-measures fit: complete-case rows and their design (the linear model's
 * reader), each row's subject and visit position, and the subjects with their records in visit
 * order. Visit positions come from the order column when named (numeric, one value per visit),
 * otherwise from the visit levels' order.
 */
import { EngineError } from "../errors";
import { cellText, isMissingAt, orderLevels, parseNumber, type DataTable } from "../data";
import {
  buildDesign,
  prepareData,
  type CategoricalVariable,
  type Design,
  type PreparedData,
} from "../design";
import { isInteraction, type ModelSpec } from "../model-spec";
import type { RepeatedSpec } from "./repeated-spec";

export interface SubjectRecords {
  readonly id: string;
  /** Indices of the subject's used rows (into the design), in visit order. */
  readonly rows: Int32Array;
  /** Visit position (0-based, into `visits`) of each of those rows. */
  readonly positions: Int32Array;
}

export interface RepeatedData {
  readonly spec: RepeatedSpec;
  readonly linearSpec: ModelSpec;
  readonly data: PreparedData;
  readonly design: Design;
  /** Visit labels in order. */
  readonly visits: readonly string[];
  readonly visitVariable: CategoricalVariable;
  /** Position of each visit level (index into `visitVariable.levels`). */
  readonly positionOfLevel: Int32Array;
  readonly subjects: readonly SubjectRecords[];
  /** Visit position of each used row. */
  readonly rowPosition: Int32Array;
  /** Subject index of each used row. */
  readonly rowSubject: Int32Array;
}

/** Reads the rows, checks subject and visit columns, groups records by subject. */
export function prepareRepeatedData(spec: RepeatedSpec, table: DataTable): RepeatedData {
  const { repeated, ...rest } = spec;
  const visitTerm = spec.terms.find((t) => !isInteraction(t) && t.variable === repeated.visit);
  if (!visitTerm)
    throw new EngineError(`visit column "${repeated.visit}" must also be a main term of the model`);
  if (repeated.subject === repeated.visit) throw new EngineError("the subject and visit columns must differ");
  for (const name of [repeated.subject, repeated.visitOrder].filter((c): c is string => c !== undefined)) {
    if (!(name in table.columns)) throw new EngineError(`column "${name}" is missing from the data`);
  }
  const linearSpec: ModelSpec = {
    ...rest,
    id: repeated.subject,
    terms: spec.terms.map((t) =>
      !isInteraction(t) && t.variable === repeated.visit ? { ...t, categorical: true } : t,
    ),
  };
  // several records per subject, one per visit: the point of the model
  const data = prepareData(linearSpec, table, { oneRowPerSubject: false });
  const visitVariable = data.variables.get(repeated.visit) as CategoricalVariable;
  const n = data.used.length;
  if (n === 0) throw new EngineError("no row has every cell the model needs");

  // visit order
  let order: string[];
  if (repeated.visitOrder) {
    const cells = table.columns[repeated.visitOrder];
    const valueOf = new Map<string, number>();
    for (let k = 0; k < n; k++) {
      const i = data.used[k];
      const level = visitVariable.levels[visitVariable.codes[k]];
      const v =
        cells instanceof Float64Array
          ? Number.isNaN(cells[i])
            ? null
            : cells[i]
          : parseNumber(cellText(cells, i));
      if (v === null) {
        throw new EngineError(
          `visit order column "${repeated.visitOrder}" is not numeric: data row ${table.rowNumbers[i]} has "${cellText(cells, i)}"`,
        );
      }
      const seen = valueOf.get(level);
      if (seen !== undefined && seen !== v) {
        throw new EngineError(
          `visit "${level}" has two values of "${repeated.visitOrder}" (${seen} and ${v}; data row ${table.rowNumbers[i]})`,
        );
      }
      valueOf.set(level, v);
    }
    order = [...visitVariable.levels].sort((a, b) => (valueOf.get(a) as number) - (valueOf.get(b) as number));
    for (let j = 1; j < order.length; j++) {
      if (valueOf.get(order[j]) === valueOf.get(order[j - 1])) {
        throw new EngineError(
          `visits "${order[j - 1]}" and "${order[j]}" share the order value ${valueOf.get(order[j])}`,
        );
      }
    }
  } else {
    order = orderLevels(visitVariable.levels);
  }
  const positionOfLevel = Int32Array.from(visitVariable.levels, (l) => order.indexOf(l));

  // subjects in order of first appearance
  const subjectCells = table.columns[repeated.subject];
  const subjectIndex = new Map<string, number>();
  const members: number[][] = [];
  const rowSubject = new Int32Array(n);
  const rowPosition = new Int32Array(n);
  for (let k = 0; k < n; k++) {
    const i = data.used[k];
    const cell = cellText(subjectCells, i);
    if (isMissingAt(subjectCells, i))
      throw new EngineError(
        `subject column "${repeated.subject}" is empty at data row ${table.rowNumbers[i]}`,
      );
    let s = subjectIndex.get(cell);
    if (s === undefined) {
      s = members.length;
      subjectIndex.set(cell, s);
      members.push([]);
    }
    members[s].push(k);
    rowSubject[k] = s;
    rowPosition[k] = positionOfLevel[visitVariable.codes[k]];
  }
  const ids = [...subjectIndex.keys()];
  const subjects = members.map((rows, s) => {
    rows.sort((a, b) => rowPosition[a] - rowPosition[b]);
    for (let j = 1; j < rows.length; j++) {
      if (rowPosition[rows[j]] === rowPosition[rows[j - 1]]) {
        throw new EngineError(
          `subject "${ids[s]}" has two records at visit "${order[rowPosition[rows[j]]]}" (data rows ${table.rowNumbers[data.used[rows[j - 1]]]} and ${table.rowNumbers[data.used[rows[j]]]})`,
        );
      }
    }
    return {
      id: ids[s],
      rows: Int32Array.from(rows),
      positions: Int32Array.from(rows, (r) => rowPosition[r]),
    };
  });
  const design = buildDesign(linearSpec, data);
  return {
    spec,
    linearSpec,
    data,
    design,
    visits: order,
    visitVariable,
    positionOfLevel,
    subjects,
    rowPosition,
    rowSubject,
  };
}
