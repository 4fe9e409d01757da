/**
 * The identifier screen: looks at every column's name and at all of its values for direct
 * identifiers in the sense of the HIPAA Privacy Rule's Safe Harbor list (45 CFR 164.514(b)(2)):
 * names, geographic subdivisions smaller than a state (street address, city, ZIP code), all
 * elements of dates (except year) directly related to a person, telephone and fax numbers,
 * e-mail addresses, social security and other national numbers, medical record, health plan
 * and account numbers, IP addresses, URLs, and any other unique identifying number or code.
 * Ages over 89 are identifiers too (164.514(b)(2)(i)(C)): a numeric age column is flagged when
 * any value is over 89. Dates stored as SAS day or second numbers (transport files) are read by
 * their DATE or DATETIME format and screened as dates.
 * A hit is a prompt for the data manager, who removes the column or records why it is not an
 * identifier (a pseudonymous subject code, for example).
 */
import type { ColumnType } from "./column-summary";

export interface ScreenRule {
  id: string;
  /** What the rule looks for, in the Safe Harbor list's terms. */
  label: string;
  byName?: RegExp;
  byValue?: RegExp;
  /** Quick test that must pass before the value pattern is tried. */
  hint?: (value: string) => boolean;
  /**
   * Share of the column's non-empty cells that must match before the column is flagged by its
   * values (default: any one cell). Patterns that also fit ordinary codes ask for most cells.
   */
  minShare?: number;
}

const hasDigit = (v: string) => /\d/.test(v);

export const SCREEN_RULES: ScreenRule[] = [
  {
    id: "name",
    label: "Person's name",
    byName:
      /^(.*_)?(first_?name|last_?name|given_?name|family_?name|surname|full_?name|patient_?name|name|initials|fname|lname)$/i,
    byValue: /\b(Mr|Mrs|Ms|Miss|Dr|Prof)\.?\s+[A-Z][a-z]+/,
    hint: (v) => /[A-Z]/.test(v),
  },
  {
    id: "address",
    label: "Street address or place smaller than a state",
    byName:
      /^(?!.*(ip|mail|web|mac)_?addr)(.*_)?(address|addr|street|street_?address|city|town|county|zip|zip_?code|postcode|postal_?code)$/i,
    byValue:
      /\b\d{1,5}\s+([A-Z][a-z]+\s+){1,3}(Street|St|Avenue|Ave|Road|Rd|Lane|Ln|Drive|Dr|Boulevard|Blvd|Way|Court|Ct|Place|Pl)\b\.?/,
    hint: hasDigit,
  },
  {
    id: "date",
    label: "Full date tied to a person (day, month and year)",
    byName:
      /^(.*_)?(dob|birth_?date|date_?of_?birth|birth_?dt|brthdt|brthdtc|birthday|death_?date|dthdt|dthdtc)$/i,
    byValue:
      /^(\d{4}-\d{2}-\d{2}([T ]\d{2}:\d{2}.*)?|\d{1,2}[/.]\d{1,2}[/.]\d{4}|\d{1,2}\s+(Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec)[a-z]*\s+\d{4})$/i,
    hint: hasDigit,
  },
  {
    id: "phone",
    label: "Telephone or fax number",
    byName: /^(.*_)?(phone|phone_?number|telephone|tel|mobile|cell|fax)$/i,
    // The whole value is a number as people write one: optional "+" or "00", digits in groups with
    // spaces, dots, dashes, slashes or brackets, optional extension; 10 to 15 digits (E.164 allows
    // 15; national numbers with their area code have at least 10). A study's subject identifier
    // (01-701-1015: study, site, subject) has fewer digits, and a column is flagged only when most
    // of its values are numbers like this, so one odd code does not make a column a phone column.
    byValue:
      /^(tel:\s*)?(\+|00)?\(?\d{1,5}\)?([\s.\-/]*\(?\d{1,8}\)?)+(\s*(x|ext\.?|extension)\s*\d{1,5})?$/i,
    hint: (v) => {
      if (v.length < 10 || v.length > 40) return false;
      const main = /[xtn]\.?\s*\d{1,5}$/i.test(v) ? v.replace(/(x|ext\.?|extension)\s*\d{1,5}$/i, "") : v;
      let digits = 0;
      for (let i = 0; i < main.length; i++) {
        const c = main.charCodeAt(i);
        if (c >= 48 && c <= 57) digits++;
      }
      return digits >= 10 && digits <= 15;
    },
    minShare: 0.5,
  },
  {
    id: "email",
    label: "E-mail address",
    byName: /^(.*_)?(e_?mail|email_?address|mail)$/i,
    byValue: /[^\s@]+@[^\s@]+\.[A-Za-z]{2,}/,
    hint: (v) => v.includes("@"),
  },
  {
    id: "national_id",
    label: "Social security or other national identification number",
    byName:
      /^(.*_)?(ssn|social_?security.*|national_?id|nin|nino|passport.*|nhs_?(no|number)|tax_?id|insurance_?number)$/i,
    byValue: /(^|[^\d])\d{3}-\d{2}-\d{4}($|[^\d])/,
    hint: hasDigit,
  },
  {
    id: "record_number",
    label: "Medical record, health plan or account number",
    byName:
      /^(.*_)?(mrn|medical_?record.*|record_?(no|number)|chart_?(no|number)|account.*|acct.*|iban|health_?plan.*|beneficiary.*|member_?id)$/i,
    byValue: /\b(MRN|Acct|Account)[\s#:.-]*\d{4,}|\b[A-Z]{2}\d{2}[A-Z0-9]{11,30}\b/i,
    hint: hasDigit,
  },
  {
    id: "ip_address",
    label: "IP address",
    byName: /^(.*_)?(ip|ip_?address|ipv4|ipv6)$/i,
    byValue: /(^|[^\d.])((25[0-5]|2[0-4]\d|1?\d?\d)\.){3}(25[0-5]|2[0-4]\d|1?\d?\d)($|[^\d.])/,
    hint: (v) => v.includes("."),
  },
  {
    id: "url",
    label: "Web address (URL)",
    byName: /^(.*_)?(url|uri|website|web_?page|homepage)$/i,
    byValue: /\bhttps?:\/\/\S+|\bwww\.[a-z0-9-]+\.[a-z]{2,}/i,
    hint: (v) => v.includes("http") || v.includes("www."),
  },
  {
    id: "subject_code",
    label: "Unique identifying number or code (subject or patient identifier)",
    byName:
      /^(usubjid|subjid|subject|subject_?(id|code|no|number)|patient|patient_?(id|code|no|number)|pid|screening_?(id|no|number)|randomi[sz]ation_?(id|no|number)|rand_?no)$/i,
  },
];

export interface ScreenHit {
  column: string;
  rule: string;
  ruleLabel: string;
  /** "column name" when the name matched, else the number of cells whose value matched. */
  basis: "name" | "values";
  matches: number;
  maskedExamples: string[];
}

/**
 * Masks a value so a hit can be shown without showing the identifier: every digit becomes
 * `#`, and every letter after the first of its word becomes `•`; punctuation is kept so the
 * shape stays visible.
 */
export function maskValue(value: string): string {
  const v = value.length > 60 ? `${value.slice(0, 60)}…` : value;
  let out = "";
  let inWord = false;
  for (const ch of v) {
    if (/\d/.test(ch)) {
      out += "#";
      inWord = false;
    } else if (/\p{L}/u.test(ch)) {
      out += inWord ? "•" : ch;
      inWord = true;
    } else {
      out += ch;
      inWord = false;
    }
  }
  return out;
}

const MAX_EXAMPLES = 3;

/** The rule for ages over 89 (Safe Harbor aggregates them into "90 or older"). */
export const AGE_RULE = {
  id: "age_over_89",
  label: "Age over 89 (Safe Harbor: ages over 89 are identifiers)",
} as const;
export const OLDEST_SHOWN_AGE = 89;
/** An age by its name (AGE, age_years, age_at_consent) or its label ("Age", "Age at baseline (years)"). */
const AGE_NAME = /^(.*_)?age(_?(yrs?|years?|at_?\w+))?$/i;
const AGE_LABEL = /^\s*age\b(?!.*\b(group|grouping|category|unit|units|band|range|class)\b)/i;

/** SAS formats that make a number a date (days since 1960-01-01) or a date-time (seconds since then). */
const SAS_DATETIME_FORMAT = /^(DATETIME|E8601DT|IS8601DT|B8601DT|DTDATE|DTYYMMDD|NLDATM|MDYAMPM)/i;
const SAS_DATE_FORMAT =
  /^(DATE|DAY|DDMMYY|MMDDYY|YYMMDD|YYMMN|YYMON|YYQ|MONYY|MONNAME|WEEKDATE|WEEKDATX|WORDDATE|WORDDATX|NLDATE|EURDF|E8601DA|IS8601DA|B8601DA|JULIAN|MMYY|YYMM)/i;
const SAS_EPOCH_MS = Date.UTC(1960, 0, 1);

/** How a numeric column's cells should be read for the screen: as SAS dates, date-times, or numbers. */
export function sasDateKind(format: string | null | undefined): "date" | "datetime" | null {
  if (!format) return null;
  const f = format.trim();
  if (SAS_DATETIME_FORMAT.test(f)) return "datetime";
  if (SAS_DATE_FORMAT.test(f)) return "date";
  return null;
}

/** A SAS date (days since 1960-01-01) or date-time (seconds) as ISO 8601 text; "" when not a number. */
export function sasNumberToIso(cell: string, kind: "date" | "datetime"): string {
  const x = Number(cell);
  if (cell.trim() === "" || !Number.isFinite(x)) return "";
  const when = new Date(SAS_EPOCH_MS + (kind === "date" ? Math.floor(x) * 86_400_000 : Math.round(x * 1000)));
  if (Number.isNaN(when.getTime())) return "";
  const iso = when.toISOString();
  return kind === "date" ? iso.slice(0, 10) : iso.slice(0, 19);
}

export interface ScreenColumn {
  name: string;
  type: ColumnType;
  cells: readonly string[];
  label?: string | null;
  /** The column's display format, when the file declares one (SAS formats in transport files). */
  format?: string | null;
}

const isNumeric = (type: string) => type === "number" || type === "integer";

function ageHit(col: ScreenColumn): ScreenHit | null {
  if (!isNumeric(col.type)) return null;
  if (!AGE_NAME.test(col.name) && !(col.label && AGE_LABEL.test(col.label))) return null;
  let matches = 0;
  const examples: string[] = [];
  for (const cell of col.cells) {
    const x = Number(cell);
    if (cell.trim() === "" || !Number.isFinite(x) || x <= OLDEST_SHOWN_AGE) continue;
    matches++;
    if (examples.length < MAX_EXAMPLES) examples.push(maskValue(cell.trim()));
  }
  return matches === 0
    ? null
    : {
        column: col.name,
        rule: AGE_RULE.id,
        ruleLabel: AGE_RULE.label,
        basis: "values",
        matches,
        maskedExamples: examples,
      };
}

/**
 * Screens every column by name and by all of its values. Text, date and date-time columns are
 * screened by value; a numeric column by value only when its format says it holds SAS dates,
 * and, when it is an age, for ages over 89.
 */
export function screenColumns(columns: ScreenColumn[]): ScreenHit[] {
  const hits: ScreenHit[] = [];
  for (const col of columns) {
    const sasDates = isNumeric(col.type) ? sasDateKind(col.format) : null;
    const byValue = !isNumeric(col.type) || sasDates !== null;
    // Count each distinct value once: most text columns have few levels.
    const distinct = new Map<string, number>();
    let nonEmpty = 0;
    if (byValue) {
      for (const raw of col.cells) {
        const cell = sasDates ? sasNumberToIso(raw, sasDates) : raw;
        if (cell === "") continue;
        nonEmpty++;
        distinct.set(cell, (distinct.get(cell) ?? 0) + 1);
      }
    }
    for (const rule of SCREEN_RULES) {
      const nameHit = rule.byName?.test(col.name) ?? false;
      let matches = 0;
      const examples: string[] = [];
      if (rule.byValue && byValue) {
        const pattern = rule.byValue;
        for (const [value, count] of distinct) {
          if (rule.hint && !rule.hint(value)) continue;
          if (!pattern.test(value)) continue;
          matches += count;
          if (examples.length < MAX_EXAMPLES) examples.push(maskValue(value));
        }
        if (rule.minShare !== undefined && matches <= rule.minShare * nonEmpty) {
          matches = 0;
          examples.length = 0;
        }
      }
      if (!nameHit && matches === 0) continue;
      if (examples.length === 0) {
        for (const value of distinct.keys()) {
          if (examples.length >= MAX_EXAMPLES) break;
          examples.push(maskValue(value));
        }
      }
      hits.push({
        column: col.name,
        rule: rule.id,
        ruleLabel: rule.label,
        basis: nameHit ? "name" : "values",
        matches,
        maskedExamples: examples,
      });
    }
    const age = ageHit(col);
    if (age) hits.push(age);
  }
  return hits;
}
