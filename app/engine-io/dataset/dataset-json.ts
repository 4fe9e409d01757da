/**
 * CDISC Dataset-JSON v1.1 reader, in its JSON form (one object with "columns" and "rows") and
 * its NDJSON form (the same attributes without "rows" on the first line, then one row array a
 * line). Keeps each column's name, label, dataType, length and displayFormat, the dataset's
 * name and label, and the key its keySequence declares. Values are checked against their
 * declared types; violations are counted in full per column, and a column may instead be
 * read by its values when the data manager chooses so.
 */
import { isMissingCell, parseNumber } from "../../engine/data";
import { DEFAULT_LIMITS, type ReadLimits } from "./limits";
import { count, Problems } from "./problems";
import {
  checkCell,
  checkNames,
  trimName,
  type ReadColumn,
  type ReadOptions,
  type ReadOutcome,
  type ValueType,
} from "./table";
import { inferValueType, isIsoTime, isoPrecision, precisionCounts } from "./typing";

/** Dataset-JSON v1.1 data types (CDISC Dataset-JSON v1.1 specification). */
export const JSON_TYPES = [
  "string",
  "integer",
  "decimal",
  "float",
  "double",
  "boolean",
  "datetime",
  "date",
  "time",
  "URI",
] as const;
type JsonDataType = (typeof JSON_TYPES)[number];

const TOP_LEVEL_REQUIRED = [
  "datasetJSONCreationDateTime",
  "datasetJSONVersion",
  "itemGroupOID",
  "records",
  "name",
  "label",
  "columns",
] as const;

function valueTypeOf(dataType: JsonDataType): ValueType {
  if (dataType === "integer") return "integer";
  if (dataType === "decimal" || dataType === "float" || dataType === "double") return "number";
  if (dataType === "date" || dataType === "datetime" || dataType === "time") return dataType;
  return "text";
}

/**
 * The deepest nesting of arrays and objects in JSON text, stopping as soon as it passes
 * `limit` (JSON.parse would overflow the stack on a deep enough file and fail without a message).
 */
export function jsonDepthOver(text: string, limit: number): number | null {
  let depth = 0;
  let inString = false;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (inString) {
      if (c === 92) i++;
      else if (c === 34) inString = false;
    } else if (c === 34) inString = true;
    else if (c === 123 || c === 91) {
      if (++depth > limit) return i;
    } else if (c === 125 || c === 93) depth--;
  }
  return null;
}

type Parsed = { ok: true; value: unknown } | { ok: false; message: string };

function parseJson(text: string): Parsed {
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch (e) {
    return { ok: false, message: e instanceof Error ? e.message : String(e) };
  }
}

/** Splits NDJSON text into its metadata object and its row arrays; null when the text is not NDJSON. */
function ndjson(
  text: string,
  fileName: string,
): { doc: Record<string, unknown>; rows: unknown[]; bad: string | null } | null {
  const lines = text.split(/\r?\n/);
  const first = parseJson(lines[0]);
  if (!first.ok || !first.value || typeof first.value !== "object" || Array.isArray(first.value)) return null;
  const rows: unknown[] = [];
  for (let i = 1; i < lines.length; i++) {
    if (lines[i].trim() === "") continue;
    const row = parseJson(lines[i]);
    if (!row.ok)
      return {
        doc: first.value as Record<string, unknown>,
        rows,
        bad: `${fileName}: line ${i + 1} is not valid JSON (${row.message}). Each line after the first must be one row as a JSON array.`,
      };
    rows.push(row.value);
  }
  return { doc: first.value as Record<string, unknown>, rows, bad: null };
}

/** Reads and checks Dataset-JSON text (JSON or NDJSON form). */
export function readDatasetJsonText(text: string, fileName: string, options: ReadOptions = {}): ReadOutcome {
  const limits: ReadLimits = { ...DEFAULT_LIMITS, ...options.limits };
  const problems = new Problems();
  const body = text.replace(/^\uFEFF/, "");
  if (body.trim() === "") return { ok: false, problems: [`The file ${fileName} is empty.`] };
  const deep = jsonDepthOver(body, limits.maxJsonDepth);
  if (deep !== null) {
    return {
      ok: false,
      problems: [
        `${fileName} nests arrays or objects more than ${limits.maxJsonDepth} levels deep (at character ${deep + 1}); Dataset-JSON needs no more than 4. This is not a Dataset-JSON file: export the dataset again as Dataset-JSON v1.1.`,
      ],
    };
  }
  let d: Record<string, unknown>;
  let rowsIn: unknown[] | null;
  const whole = /\.ndjson$/i.test(fileName) ? null : parseJson(body);
  if (whole?.ok) {
    if (!whole.value || typeof whole.value !== "object" || Array.isArray(whole.value)) {
      return {
        ok: false,
        problems: [`${fileName} does not follow Dataset-JSON v1.1: the file must hold one JSON object.`],
      };
    }
    d = whole.value as Record<string, unknown>;
    rowsIn = Array.isArray(d.rows) ? d.rows : null;
  } else {
    const nd = ndjson(body, fileName);
    if (!nd)
      return {
        ok: false,
        problems: [
          `${fileName} is not valid JSON (${whole && !whole.ok ? whole.message : "its first line is not one JSON object"}). Export it again as Dataset-JSON.`,
        ],
      };
    if (nd.bad) return { ok: false, problems: [nd.bad] };
    d = nd.doc;
    rowsIn = nd.rows;
  }
  options.onProgress?.(0.5);
  const not = (what: string) => `${fileName} does not follow Dataset-JSON v1.1: ${what}.`;
  const version = typeof d.datasetJSONVersion === "string" ? d.datasetJSONVersion : null;
  if ((version && /^1\.0(\.|$)/.test(version)) || "clinicalData" in d || "referenceData" in d) {
    return {
      ok: false,
      problems: [
        `${fileName} is Dataset-JSON version ${version ?? "1.0"}; Plumbline reads version 1.1, whose structure differs. Convert the file to Dataset-JSON v1.1 (or export the dataset again as v1.1) and upload that.`,
      ],
    };
  }
  for (const key of TOP_LEVEL_REQUIRED)
    if (!(key in d)) problems.add(not(`the required attribute "${key}" is missing`));
  if (!("rows" in d) && !/\.ndjson$/i.test(fileName) && whole?.ok)
    problems.add(not(`the required attribute "rows" is missing`));
  if (problems.any) return { ok: false, problems: problems.result() };
  if (!version || !/^1\.1(\.\d+)?$/.test(version))
    problems.add(
      not(`"datasetJSONVersion" is ${JSON.stringify(d.datasetJSONVersion)}; Plumbline reads version 1.1`),
    );
  if (!Array.isArray(d.columns) || d.columns.length === 0)
    problems.add(not(`"columns" must be a non-empty array`));
  if (!rowsIn) problems.add(not(`"rows" must be an array`));
  if (typeof d.records !== "number" || !Number.isInteger(d.records))
    problems.add(not(`"records" must be a whole number`));
  if (problems.any) return { ok: false, problems: problems.result() };
  const columnsIn = d.columns as unknown[];
  const rows = rowsIn as unknown[];
  if (columnsIn.length > limits.maxColumns) {
    checkNames(
      fileName,
      columnsIn.map(() => "x"),
      limits,
      problems,
    );
    return { ok: false, problems: problems.result() };
  }
  const names: string[] = [];
  const columns: ReadColumn[] = [];
  const dataTypes: JsonDataType[] = [];
  const keyOrder: { name: string; seq: number }[] = [];
  columnsIn.forEach((c, i) => {
    const col = (c && typeof c === "object" ? c : {}) as Record<string, unknown>;
    for (const attr of ["itemOID", "name", "label", "dataType"]) {
      if (typeof col[attr] !== "string")
        problems.add(not(`columns[${i}] needs the text attribute "${attr}"`));
    }
    const dataType = col.dataType as JsonDataType;
    if (typeof col.dataType === "string" && !JSON_TYPES.includes(dataType)) {
      problems.add(
        not(
          `columns[${i}] ("${String(col.name)}") has dataType "${col.dataType}"; allowed are ${JSON_TYPES.join(", ")}`,
        ),
      );
    }
    const name = typeof col.name === "string" ? trimName(col.name) : "";
    names.push(name);
    dataTypes.push(dataType);
    const column: ReadColumn = {
      name,
      label: typeof col.label === "string" ? col.label : null,
      valueType: valueTypeOf(dataType),
      declaredType: String(col.dataType),
    };
    if (typeof col.displayFormat === "string" && col.displayFormat !== "") column.format = col.displayFormat;
    if (typeof col.length === "number") column.length = col.length;
    columns.push(column);
    if (typeof col.keySequence === "number") keyOrder.push({ name, seq: col.keySequence });
  });
  checkNames(fileName, names, limits, problems);
  if (problems.any) return { ok: false, problems: problems.result() };
  const byValues = new Set(options.readByValues ?? []);
  for (const n of byValues)
    if (!names.includes(n))
      problems.add(
        `${fileName}: the column "${n}" to read by its values is not in the file. Its columns are: ${names.join(", ")}.`,
      );
  if (d.records !== rows.length)
    problems.add(not(`"records" says ${String(d.records)} rows but "rows" holds ${rows.length}`));
  if (rows.length === 0)
    problems.add(`${fileName} has its columns but no data rows. Upload the file with its data.`);
  if (problems.any) return { ok: false, problems: problems.result() };

  const cells: string[][] = names.map(() => new Array<string>(rows.length));
  const rowNumbers: number[] = new Array<number>(rows.length);
  const violations = names.map(() => ({ n: 0, first: [] as string[], what: null as Violation | null }));
  for (let i = 0; i < rows.length && !problems.full; i++) {
    const row = rows[i];
    const n = i + 1;
    rowNumbers[i] = n;
    if (!Array.isArray(row)) {
      problems.add(not(`row ${n} must be an array of values`));
      continue;
    }
    if (row.length !== names.length)
      problems.add(
        `${fileName}: row ${n} has ${row.length} values where "columns" lists ${names.length}. Export the file again.`,
      );
    for (let j = 0; j < names.length; j++) {
      const v: unknown = row[j] ?? null;
      const cell =
        v === null ? "" : typeof v === "string" ? v : typeof v === "object" ? JSON.stringify(v) : String(v);
      if (!byValues.has(names[j])) {
        const what = violation(dataTypes[j], v);
        if (what) {
          const vi = violations[j];
          vi.n++;
          vi.what ||= what;
          if (vi.first.length < 3)
            vi.first.push(`row ${n} '${(typeof v === "string" ? v : JSON.stringify(v)).slice(0, 40)}'`);
        }
      }
      if (cell.length > limits.maxCellChars || cell.includes("\u0000"))
        checkCell(fileName, names[j], n, cell, limits, problems);
      cells[j][i] = cell;
    }
  }
  violations.forEach((vi, j) => {
    if (vi.n === 0) return;
    problems.add(
      `${fileName}: ${count(vi.n, "cell")} in column "${names[j]}" declared ${dataTypes[j]} ${VIOLATION_WORDS[vi.what as Violation][vi.n === 1 ? 0 : 1]}; first: ${vi.first.join(", ")}${vi.n > vi.first.length ? ", …" : ""}. Correct the file, or read this column by its values (upload option, with a reason for the audit trail).`,
    );
  });
  options.onProgress?.(0.8);
  if (problems.any) return { ok: false, problems: problems.result() };
  columns.forEach((c, j) => {
    if (byValues.has(c.name)) {
      c.readByValues = true;
      c.valueType = inferValueType(cells[j]);
    }
    if (c.valueType === "date" || c.valueType === "datetime")
      c.precision = precisionCounts(cells[j], c.valueType);
  });
  const declaredKey = keyOrder.length > 0 ? keyOrder.sort((a, b) => a.seq - b.seq).map((k) => k.name) : null;
  return {
    ok: true,
    table: {
      format: "dataset-json",
      datasetName: typeof d.name === "string" ? d.name : null,
      datasetLabel: typeof d.label === "string" ? d.label : null,
      names,
      cells,
      rowNumbers,
      columns,
      declaredKey,
    },
  };
}

type Violation =
  | "decimals"
  | "notNumber"
  | "notNumberText"
  | "notBoolean"
  | "notDate"
  | "notDatetime"
  | "notTime"
  | "notText";

/** Words for a violation, after "N cell(s) in column X declared T". */
const VIOLATION_WORDS: Record<Violation, [one: string, many: string]> = {
  decimals: ["holds a decimal", "hold decimals"],
  notNumber: ["is not a number", "are not numbers"],
  notNumberText: ["is not a number written as text", "are not numbers written as text"],
  notBoolean: ["is not true or false", "are not true or false"],
  notDate: ["is not an ISO 8601 date", "are not ISO 8601 dates"],
  notDatetime: ["is not an ISO 8601 date or datetime", "are not ISO 8601 dates or datetimes"],
  notTime: ["is not an ISO 8601 time", "are not ISO 8601 times"],
  notText: ["is not text", "are not text"],
};

/** What is wrong with a value for its declared type, or null. */
function violation(dataType: JsonDataType, v: unknown): Violation | null {
  if (v === null) return null;
  switch (dataType) {
    case "integer":
      if (typeof v === "number") return Number.isInteger(v) ? null : "decimals";
      return "notNumber";
    case "float":
    case "double":
      return typeof v === "number" ? null : "notNumber";
    case "decimal":
      // v1.1 carries decimal values as text so that no digit is lost (a JSON number is accepted too).
      if (typeof v === "number") return null;
      return typeof v === "string" && (isMissingCell(v) || parseNumber(v) !== null) ? null : "notNumberText";
    case "boolean":
      return typeof v === "boolean" ? null : "notBoolean";
    case "date":
    case "datetime":
      if (typeof v !== "string") return "notText";
      return v === "" || isoPrecision(v, dataType) !== null
        ? null
        : dataType === "date"
          ? "notDate"
          : "notDatetime";
    case "time":
      if (typeof v !== "string") return "notText";
      return v === "" || isIsoTime(v) ? null : "notTime";
    default:
      return typeof v === "string" ? null : "notText";
  }
}
