/**
 * XPORT (SAS transport, version 5) reader through xport-js, which reads these files cell for
 * cell as R's haven::read_xpt does. Keeps each variable's name, label, type (Num or Char),
 * length and format, and the dataset's name and label. Numbers whose format names a date,
 * datetime or time (DATE9., E8601DT., TIME8., …) arrive as day or second counts from
 * 1960-01-01 (or midnight) and are turned into ISO 8601 text; other missing numbers are empty.
 */
import { open } from "node:fs/promises";
import { createReadStream } from "node:fs";
import XportModule from "xport-js";
import { DEFAULT_LIMITS, type ReadLimits } from "./limits";
import { Problems } from "./problems";
import { checkCell, checkNames, type ReadColumn, type ReadOptions, type ReadOutcome } from "./table";
import { isoTextType, precisionCounts } from "./typing";

// From an ES module the package's class is its `default` export (the CommonJS build's exports object).
type XportLibrary = import("xport-js").default;
const Library = ((XportModule as unknown as { default?: unknown }).default ?? XportModule) as new (
  path: string,
) => XportLibrary;

const LIBRARY_V5 = "HEADER RECORD*******LIBRARY HEADER RECORD!!!!!!!";
const LIBRARY_V8 = "HEADER RECORD*******LIBV8   HEADER RECORD!!!!!!!";
const MEMBER = "HEADER RECORD*******MEMBER  HEADER RECORD!!!!!!!";
const MEMBER_V8 = "HEADER RECORD*******MEMBV8  HEADER RECORD!!!!!!!";

/** Formats whose numbers count days since 1960-01-01. */
const DATE_FORMATS =
  /^(DATE|DAY|DDMMYY[BCDNPS]?|MMDDYY[BCDNPS]?|YYMMDD[BCDNPS]?|E8601DA|IS8601DA|B8601DA|ND8601DA|WEEKDATE|WEEKDATX|WORDDATE|WORDDATX|MONYY|MMYY[CDNPS]?|YYMM[CDNPS]?|YYMON|YYQ[CDNPS]?|JULIAN|NLDATE[A-Z]*|EURDFDE|MINGUO|YEAR)$/;
/** Formats whose numbers count seconds since 1960-01-01 00:00. */
const DATETIME_FORMATS =
  /^(DATETIME|DATEAMPM|E8601DT|IS8601DT|B8601DT|E8601DZ|IS8601DZ|B8601DZ|E8601DN|MDYAMPM|NLDATM[A-Z]*|DTDATE|DTMONYY|DTWKDATX|DTYEAR|DTYYQC)$/;
/** Formats whose numbers count seconds since midnight. */
const TIME_FORMATS =
  /^(TIME|TIMEAMPM|TOD|HHMM|HOUR|MMSS|E8601TM|IS8601TM|B8601TM|E8601TZ|IS8601TZ|NLTIME[A-Z]*)$/;

const EPOCH_1960 = Date.UTC(1960, 0, 1);

function isoDate(days: number): string {
  return new Date(EPOCH_1960 + Math.floor(days) * 86_400_000).toISOString().slice(0, 10);
}

function isoDateTime(seconds: number): string {
  const text = new Date(EPOCH_1960 + seconds * 1000).toISOString();
  return Number.isInteger(seconds) ? text.slice(0, 19) : text.slice(0, 23);
}

function isoTime(seconds: number): string {
  const s = Math.round(seconds * 1000) / 1000;
  const h = Math.floor(s / 3600);
  const m = Math.floor((s % 3600) / 60);
  const sec = s % 60;
  const pad = (n: number) => String(n).padStart(2, "0");
  return `${pad(h)}:${pad(m)}:${Number.isInteger(sec) ? pad(sec) : sec.toFixed(3).padStart(6, "0")}`;
}

/** How many member (dataset) headers the file holds, found by streaming it once. */
async function countMembers(path: string): Promise<number> {
  let n = 0;
  let tail = "";
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 }) as AsyncIterable<Buffer>) {
    const text = tail + chunk.toString("latin1");
    for (let i = text.indexOf(MEMBER); i !== -1; i = text.indexOf(MEMBER, i + 1)) n++;
    tail = text.slice(-(MEMBER.length - 1));
  }
  return n;
}

/** Reads and checks an XPORT file. */
export async function readXport(
  path: string,
  fileName: string,
  options: ReadOptions = {},
): Promise<ReadOutcome> {
  const limits: ReadLimits = { ...DEFAULT_LIMITS, ...options.limits };
  const problems = new Problems();
  const head = Buffer.alloc(80 * 4);
  const fh = await open(path, "r");
  const { bytesRead } = await fh.read(head, 0, head.length, 0).finally(() => fh.close());
  const start = head.toString("latin1", 0, bytesRead);
  if (start.startsWith(LIBRARY_V8) || start.includes(MEMBER_V8)) {
    return {
      ok: false,
      problems: [
        `${fileName} is an XPORT version 8 transport file; Plumbline reads version 5, the version submitted datasets use. Export the dataset again as XPORT version 5 (or as Dataset-JSON v1.1) and upload that.`,
      ],
    };
  }
  if (!start.startsWith(LIBRARY_V5)) {
    return {
      ok: false,
      problems: [
        `${fileName} is not an XPORT transport file: it does not start with the XPORT library header. Upload the .xpt file as it was exported, or a CSV or Dataset-JSON file.`,
      ],
    };
  }
  const members = await countMembers(path);
  if (members !== 1) {
    return {
      ok: false,
      problems: [
        members === 0
          ? `${fileName} holds no dataset. Export the dataset again as XPORT version 5.`
          : `${fileName} holds ${members} datasets; upload one dataset per file.`,
      ],
    };
  }
  const lib = new Library(path);
  let columns: ReadColumn[];
  let datasetName: string | null = null;
  let datasetLabel: string | null = null;
  try {
    await lib.getMetadata();
    const member = lib.members[0];
    datasetName = member.name || null;
    datasetLabel = member.label || null;
    columns = member.variableOrder.map((key) => {
      const v = member.variables[key];
      const column: ReadColumn = {
        name: v.name,
        label: v.label || null,
        valueType: v.type === "Num" ? "number" : "text",
        declaredType: v.type,
        length: v.length,
      };
      if (v.formatName)
        column.format = `${v.formatName}${v.formatW !== "0" ? v.formatW : ""}.${v.formatD !== "0" ? v.formatD : ""}`;
      if (v.type === "Num" && DATE_FORMATS.test(v.formatName)) column.valueType = "date";
      else if (v.type === "Num" && DATETIME_FORMATS.test(v.formatName)) column.valueType = "datetime";
      else if (v.type === "Num" && TIME_FORMATS.test(v.formatName)) column.valueType = "time";
      return column;
    });
  } catch (e) {
    return {
      ok: false,
      problems: [
        `${fileName} is not a readable XPORT file (${e instanceof Error ? e.message : String(e)}). Export the dataset again as XPORT version 5.`,
      ],
    };
  }
  const names = columns.map((c) => c.name);
  checkNames(fileName, names, limits, problems);
  if (problems.any) return { ok: false, problems: problems.result() };
  const cells: string[][] = names.map(() => []);
  const convert = columns.map((c): ((v: number) => string) =>
    c.valueType === "date"
      ? isoDate
      : c.valueType === "datetime"
        ? isoDateTime
        : c.valueType === "time"
          ? isoTime
          : String,
  );
  const integer = columns.map((c) => c.valueType === "number");
  let n = 0;
  try {
    for await (const obs of lib.read({
      rowFormat: "array",
      encoding: "latin1",
      skipHeader: true,
    }) as AsyncIterable<(number | string | null)[]>) {
      n++;
      for (let j = 0; j < names.length; j++) {
        const v = obs[j];
        let cell: string;
        if (v === null || v === undefined) cell = "";
        else if (typeof v === "number") {
          if (integer[j] && !Number.isInteger(v)) integer[j] = false;
          cell = convert[j](v);
        } else cell = v;
        if (cell.length > limits.maxCellChars || cell.includes("\u0000"))
          checkCell(fileName, names[j], n, cell, limits, problems);
        cells[j].push(cell);
      }
      if (problems.full) break;
    }
  } catch (e) {
    return {
      ok: false,
      problems: [
        `${fileName}: record ${n + 1} could not be read (${e instanceof Error ? e.message : String(e)}). Export the dataset again as XPORT version 5.`,
      ],
    };
  }
  if (problems.any) return { ok: false, problems: problems.result() };
  if (n === 0)
    return {
      ok: false,
      problems: [`${fileName} has its variables but no records. Upload the file with its data.`],
    };
  columns.forEach((c, j) => {
    if (c.valueType === "number" && integer[j]) c.valueType = "integer";
    if (c.declaredType === "Char") c.valueType = isoTextType(c.name, cells[j]) ?? "text";
    if (c.valueType === "date" || c.valueType === "datetime")
      c.precision = precisionCounts(cells[j], c.valueType);
  });
  const rowNumbers = Array.from({ length: n }, (_, i) => i + 1);
  return {
    ok: true,
    table: { format: "xpt", datasetName, datasetLabel, names, cells, rowNumbers, columns, declaredKey: null },
  };
}
