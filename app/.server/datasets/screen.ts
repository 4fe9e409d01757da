/**
 * The identifier screen: looks at every column's name and at all of its values for direct
 * identifiers in the sense of the HIPAA Privacy Rule's Safe Harbor list (45 CFR 164.514(b)(2)):
 * names, geographic subdivisions smaller than a state (street address, city, ZIP code), all
 * elements of dates (except year) directly related to a person, telephone and fax numbers,
 * e-mail addresses, social security and other national numbers, medical record, health plan
 * and account numbers, IP addresses, URLs, and any other unique identifying number or code.
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
}

const hasDigit = (v: string) => /\d/.test(v);

export const SCREEN_RULES: ScreenRule[] = [
  {
    id: "name",
    label: "Person's name",
    byName: /^(.*_)?(first_?name|last_?name|given_?name|family_?name|surname|full_?name|patient_?name|name|initials|fname|lname)$/i,
    byValue: /\b(Mr|Mrs|Ms|Miss|Dr|Prof)\.?\s+[A-Z][a-z]+/,
    hint: (v) => /[A-Z]/.test(v),
  },
  {
    id: "address",
    label: "Street address or place smaller than a state",
    byName: /^(?!.*(ip|mail|web|mac)_?addr)(.*_)?(address|addr|street|street_?address|city|town|county|zip|zip_?code|postcode|postal_?code)$/i,
    byValue: /\b\d{1,5}\s+([A-Z][a-z]+\s+){1,3}(Street|St|Avenue|Ave|Road|Rd|Lane|Ln|Drive|Dr|Boulevard|Blvd|Way|Court|Ct|Place|Pl)\b\.?/,
    hint: hasDigit,
  },
  {
    id: "date",
    label: "Full date tied to a person (day, month and year)",
    byName: /^(.*_)?(dob|birth_?date|date_?of_?birth|birth_?dt|brthdt|brthdtc|birthday|death_?date|dthdt|dthdtc)$/i,
    byValue: /^(\d{4}-\d{2}-\d{2}([T ]\d{2}:\d{2}.*)?|\d{1,2}[/.]\d{1,2}[/.]\d{4}|\d{1,2}\s+(Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec)[a-z]*\s+\d{4})$/i,
    hint: hasDigit,
  },
  {
    id: "phone",
    label: "Telephone or fax number",
    byName: /^(.*_)?(phone|phone_?number|telephone|tel|mobile|cell|fax)$/i,
    byValue: /(^|[^\d])(\+\d{1,3}[\s.-]?)?(\(\d{2,4}\)\s?|\d{2,4}[\s.-])\d{3,4}[\s.-]\d{3,4}($|[^\d])/,
    hint: hasDigit,
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
    byName: /^(.*_)?(ssn|social_?security.*|national_?id|nin|nino|passport.*|nhs_?(no|number)|tax_?id|insurance_?number)$/i,
    byValue: /(^|[^\d])\d{3}-\d{2}-\d{4}($|[^\d])/,
    hint: hasDigit,
  },
  {
    id: "record_number",
    label: "Medical record, health plan or account number",
    byName: /^(.*_)?(mrn|medical_?record.*|record_?(no|number)|chart_?(no|number)|account.*|acct.*|iban|health_?plan.*|beneficiary.*|member_?id)$/i,
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
    byName: /^(usubjid|subjid|subject|subject_?(id|code|no|number)|patient|patient_?(id|code|no|number)|pid|screening_?(id|no|number)|randomi[sz]ation_?(id|no|number)|rand_?no)$/i,
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

/** Screens every column by name and by all of its values. */
export function screenColumns(columns: { name: string; type: ColumnType; cells: readonly string[] }[]): ScreenHit[] {
  const hits: ScreenHit[] = [];
  for (const col of columns) {
    // Count each distinct value once: most text columns have few levels.
    const distinct = new Map<string, number>();
    if (col.type !== "number") {
      for (const cell of col.cells) if (cell !== "") distinct.set(cell, (distinct.get(cell) ?? 0) + 1);
    }
    for (const rule of SCREEN_RULES) {
      const nameHit = rule.byName?.test(col.name) ?? false;
      let matches = 0;
      const examples: string[] = [];
      if (rule.byValue && col.type !== "number") {
        const pattern = rule.byValue;
        for (const [value, count] of distinct) {
          if (rule.hint && !rule.hint(value)) continue;
          if (!pattern.test(value)) continue;
          matches += count;
          if (examples.length < MAX_EXAMPLES) examples.push(maskValue(value));
        }
      }
      if (!nameHit && matches === 0) continue;
      if (examples.length === 0) {
        for (const value of distinct.keys()) {
          if (examples.length >= MAX_EXAMPLES) break;
          examples.push(maskValue(value));
        }
      }
      hits.push({ column: col.name, rule: rule.id, ruleLabel: rule.label, basis: nameHit ? "name" : "values", matches, maskedExamples: examples });
    }
  }
  return hits;
}
