/**
 * Column typing shared by every reader: ISO 8601 dates, datetimes and times (partial values
 * allowed, with their precision), whole numbers versus decimals, decimal commas, and the
 * warning for a column of numbers with a few text cells in it.
 */
import { isMissingCell, parseNumber } from "../../engine/data";
import { count } from "./problems";
import type { DatePrecision, ValueType } from "./table";

const DATE_PART = /^(\d{4})(?:-(\d{2})(?:-(\d{2}))?)?$/;
const TIME_PART = /^(\d{2})(?::(\d{2})(?::(\d{2})(?:[.,]\d+)?)?)?(Z|[+-]\d{2}(?::?\d{2})?)?$/;

function validDate(y: number, m?: number, d?: number): boolean {
  if (m === undefined) return true;
  if (m < 1 || m > 12) return false;
  if (d === undefined) return true;
  const days = new Date(Date.UTC(y, m, 0)).getUTCDate();
  return d >= 1 && d <= days;
}

function timePrecision(text: string): DatePrecision | null {
  const t = TIME_PART.exec(text);
  if (!t) return null;
  const [h, mi, s] = [
    Number(t[1]),
    t[2] === undefined ? undefined : Number(t[2]),
    t[3] === undefined ? undefined : Number(t[3]),
  ];
  if (h > 24 || (mi !== undefined && mi > 59) || (s !== undefined && s > 60)) return null;
  return s !== undefined ? "second" : mi !== undefined ? "minute" : "hour";
}

/**
 * The precision of an ISO 8601 date or datetime value, partial ones included ("1950",
 * "2012-11", "2012-11-30", "2012-11-30T10:15"), or null when the text is no such value.
 * A datetime column may hold date-only values (as CDISC's examples do).
 */
export function isoPrecision(text: string, kind: "date" | "datetime"): DatePrecision | null {
  const [datePart, timePart, extra] = text.split("T");
  if (extra !== undefined) return null;
  const d = DATE_PART.exec(datePart);
  if (!d) return null;
  const y = Number(d[1]);
  const m = d[2] === undefined ? undefined : Number(d[2]);
  const day = d[3] === undefined ? undefined : Number(d[3]);
  if (!validDate(y, m, day)) return null;
  if (timePart === undefined) return day !== undefined ? "day" : m !== undefined ? "month" : "year";
  if (kind === "date" || day === undefined) return null;
  return timePrecision(timePart);
}

/** True for an ISO 8601 time of day (hh, hh:mm or hh:mm:ss with optional fraction and zone). */
export function isIsoTime(text: string): boolean {
  return timePrecision(text) !== null;
}

/** How many values of each precision a date or datetime column holds. */
export function precisionCounts(
  cells: readonly string[],
  kind: "date" | "datetime",
): Partial<Record<DatePrecision, number>> {
  const counts: Partial<Record<DatePrecision, number>> = {};
  for (const cell of cells) {
    if (cell === "") continue;
    const p = isoPrecision(cell, kind);
    if (p) counts[p] = (counts[p] ?? 0) + 1;
  }
  return counts;
}

const FULL_DATE = /^\d{4}-\d{2}-\d{2}$/;
const FULL_DATETIME = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}/;

/**
 * The narrowest type every non-missing cell of a column without declared type fits: integer,
 * number, date (complete YYYY-MM-DD), datetime (date and time to the minute at least), time,
 * else text. Partial dates are not guessed from undeclared text ("2012" is a number there).
 */
export function inferValueType(cells: readonly string[]): ValueType {
  let integer = true;
  let number = true;
  let date = true;
  let datetime = true;
  let time = true;
  let seen = 0;
  for (const raw of cells) {
    if (isMissingCell(raw)) continue;
    seen++;
    const cell = raw.trim();
    if (number) {
      const v = parseNumber(cell);
      if (v === null) number = integer = false;
      else if (integer && !Number.isInteger(v)) integer = false;
    }
    if (date && !(FULL_DATE.test(cell) && isoPrecision(cell, "date") === "day")) date = false;
    if (datetime && !(FULL_DATETIME.test(cell) && isoPrecision(cell, "datetime") !== null)) datetime = false;
    if (time && !(cell.includes(":") && isIsoTime(cell))) time = false;
    if (!number && !date && !datetime && !time) return "text";
  }
  if (seen === 0) return "text";
  return integer
    ? "integer"
    : number
      ? "number"
      : date
        ? "date"
        : datetime
          ? "datetime"
          : time
            ? "time"
            : "text";
}

/** The type the stored summaries know (integers are numbers, times are text). */
export function summaryType(t: ValueType): "number" | "text" | "date" | "datetime" {
  return t === "integer" ? "number" : t === "time" ? "text" : t;
}

const DECIMAL_COMMA = /^[+-]?\d+(,\d+)?$/;

/**
 * In a semicolon-separated file, a column whose every non-missing cell is a number written
 * with a decimal comma (and at least one comma) is read as numbers: returns the cells with
 * decimal points, or null when the column is not such a column.
 */
export function decimalCommaCells(cells: readonly string[]): string[] | null {
  let commas = 0;
  for (const raw of cells) {
    if (isMissingCell(raw)) continue;
    const cell = raw.trim();
    if (!DECIMAL_COMMA.test(cell)) return null;
    if (cell.includes(",")) commas++;
  }
  if (commas === 0) return null;
  return cells.map((c) => (isMissingCell(c) ? c : c.trim().replace(",", ".")));
}

/** At most this share of a column's cells may be text for the column to count as "mostly numbers". */
const MOSTLY = 0.1;

/**
 * A warning for a column read as text although nearly all its cells are numbers: names the
 * text cells (row and value), so the data manager can correct them. Null for other columns.
 */
export function mostlyNumbersWarning(
  file: string,
  column: string,
  cells: readonly string[],
  rowNumbers: readonly number[],
): string | null {
  let numbers = 0;
  const text: number[] = [];
  for (let i = 0; i < cells.length; i++) {
    if (isMissingCell(cells[i])) continue;
    if (parseNumber(cells[i]) !== null) numbers++;
    else {
      text.push(i);
      if (text.length > MOSTLY * cells.length + 1) return null;
    }
  }
  if (text.length === 0 || numbers < 5 || text.length > MOSTLY * (numbers + text.length)) return null;
  const shown = text.slice(0, 5).map((i) => `row ${rowNumbers[i]} "${cells[i].slice(0, 40)}"`);
  const rest = text.length > 5 ? `, and ${text.length - 5} more` : "";
  return `${file}: column "${column}" is mostly numbers, but ${count(text.length, "cell")} ${text.length === 1 ? "holds" : "hold"} text, so it was read as text: ${shown.join(", ")}${rest}. Correct ${text.length === 1 ? "it" : "them"} (or leave missing values empty) and upload again to read the column as numbers.`;
}

/**
 * A text column of ISO 8601 values (as transport files carry SDTM --DTC variables): "date" or
 * "datetime" when every non-missing value is one (partial values allowed) and either the name
 * ends in DTC, the standard's suffix for such variables, or some value is a complete date.
 * Null otherwise.
 */
export function isoTextType(name: string, cells: readonly string[]): "date" | "datetime" | null {
  let seen = 0;
  let complete = false;
  let withTime = false;
  for (const cell of cells) {
    if (cell === "") continue;
    const p = isoPrecision(cell, "datetime");
    if (p === null) return null;
    seen++;
    if (p !== "year" && p !== "month") complete = true;
    if (p === "hour" || p === "minute" || p === "second") withTime = true;
  }
  if (seen === 0 || !(complete || /DTC$/i.test(name))) return null;
  return withTime ? "datetime" : "date";
}
