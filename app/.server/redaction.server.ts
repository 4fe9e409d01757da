/**
 * The one redaction of subject-level data. Whether a viewer sees subjects is decided once, by
 * `seesSubjects` in permissions.server.ts; every page, figure answer, export, e-mail and API
 * answer that may reach someone who does not makes a `Redaction` here, passes its texts through
 * it, and checks its whole answer with `assertClean` before it leaves the server.
 *
 * The engine's texts name subjects ("largest Cook's distance 0.322 (subject QMT301-0217)",
 * "row 17"); for a viewer without subjects these become the subject's rank among the check's
 * flagged subjects ("the subject ranked 1") or "a subject". Any other mention of an identifier
 * (a rationale someone typed) becomes "(id withheld)". The identifiers looked for are the
 * rerun's own: every id of its observations and, when the locked dataset is at hand, every id of
 * its id column. No pattern guesses what an identifier looks like.
 */
import { inArray } from "drizzle-orm";
import type { CheckOutcome } from "~/engine/checks";
import { loadLockedTable } from "./datasets/catalog.server";
import { db, t } from "./db/index.server";
import type { ViewDocument } from "./reruns/page-document";
import { subjectIdsOf } from "./reruns/document-subjects";
import { IDENTITY } from "./redaction-identity";
import { storedRerunDocument } from "./reruns/rerun-rows.server";

export const WITHHELD = "(id withheld)";

/** What a viewer is shown of a check's flagged subjects: the five most extreme. */
export interface FlaggedView {
  rank: number;
  value: number;
  /** The subject id (or data row) for viewers who see subjects, "subject ranked k" for the others. */
  who: string;
}

export interface Redaction {
  /** True when the viewer may see subjects: every method then returns its input unchanged. */
  readonly seesSubjects: boolean;
  /** The text with every subject named by rank within the check (when known), "a subject", or withheld. */
  text(value: string, checkKey?: string | null): string;
  /** The same for a text that may be missing. */
  maybe(value: string | null, checkKey?: string | null): string | null;
  /** The appendix's wording: naming clauses dropped ("(subject X)", "the most extreme is …"), then redacted. */
  countOnly(value: string): string;
  /** The five most extreme flagged subjects of a check, named only for viewers who see subjects. */
  flagged(c: CheckOutcome): FlaggedView[];
  /** The first string anywhere in the value that still names a subject, or null. */
  leak(value: unknown): string | null;
  /** Throws (the answer is refused with a 500, never sent) when a viewer without subjects would receive one. */
  assertClean<T>(value: T, what: string): T;
}

const escape = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, "\\$&");

/** Identifiers that are plain numbers cannot be told from figures in free text; they are caught after "subject" and in subject fields. */
const findableBare = (id: string) => id.length >= 4 && !/^[\d.]+$/.test(id);

/** An identifier that is one word; and the words of a text, each with "subject " before it when it is there. */
const WORD_ID = /^[\p{L}\p{N}_-]+$/u;
const WORDS = /([Ss]ubject )?([\p{L}\p{N}_-]+)/gu;

/** Fields of an answer that hold who a point or a flagged entry is. */
const SUBJECT_FIELDS = new Set(["subject", "subjectId", "who"]);

/**
 * Drops the clauses by which the engine's check texts name a subject, leaving counts: "(subject
 * X)", "(row N)" and "; the most extreme is subject X". The appendix reads this way.
 */
function withoutNamingClauses(text: string): string {
  return text
    .replace(/;?\s*the most extreme is (subject \S+?|row \d+)(?=\.|$)/g, "")
    .replace(/\s*\((subject [^)]*|row \d+)\)/g, "")
    .trim();
}

/**
 * The redaction for one viewer: `seesSubjects` from permissions.server.ts, the reruns whose
 * subjects the answer may mention, and further ids (the locked dataset's id column).
 */
/** `subject "…"` as the engine's messages name a subject. */
const QUOTED_SUBJECT = /\b([Ss])ubject "[^"]*"/g;

export function redaction(
  seesSubjects: boolean,
  docs: readonly (ViewDocument | null)[],
  moreIds: Iterable<string> = [],
): Redaction {
  if (seesSubjects) return IDENTITY;
  const ids = new Set<string>();
  const rankOf = new Map<string, Map<string, number>>();
  for (const doc of docs) {
    if (!doc) continue;
    for (const id of subjectIdsOf(doc)) ids.add(id);
    for (const c of doc.checks) {
      const ranks = rankOf.get(c.key) ?? new Map<string, number>();
      for (const f of c.flagged ?? []) ranks.set(f.id ?? `row ${f.row}`, f.rank);
      rankOf.set(c.key, ranks);
    }
  }
  for (const raw of moreIds) {
    const id = raw.trim();
    if (id) ids.add(id);
  }
  // Identifiers made of letters, digits, "_" and "-" are found word by word in a Set: a regular
  // expression of every identifier takes 2.6 s to build and run for 200 000 subjects, the word
  // scan 0.27 s (measured with Node 20). Any other identifier (with a space, say) is looked for
  // as written, longest first, so one that is a prefix of another never leaves a tail behind.
  const wordIds = new Set<string>();
  const otherIds: string[] = [];
  for (const id of ids) WORD_ID.test(id) ? wordIds.add(id) : otherIds.push(id);
  otherIds.sort((a, b) => b.length - a.length);
  const alternatives = (list: string[]) => list.map(escape).join("|");
  const otherAfterWord = otherIds.length
    ? new RegExp(`\\b([Ss])ubject (${alternatives(otherIds)})(?![A-Za-z0-9_-])`, "g")
    : null;
  const otherBareList = otherIds.filter(findableBare);
  const otherBare = otherBareList.length
    ? new RegExp(`(?<![A-Za-z0-9_-])(${alternatives(otherBareList)})(?![A-Za-z0-9_-])`, "g")
    : null;
  const row = /\b([Rr])ow (\d+)\b/g;
  const replacement = (s: string, who: string, checkKey?: string | null) => {
    const rank = checkKey ? rankOf.get(checkKey)?.get(who) : undefined;
    const words = rank ? `the subject ranked ${rank}` : "a subject";
    return s === "S" || s === "R" ? words[0].toUpperCase() + words.slice(1) : words;
  };
  /** A word that is a subject id: after "subject", or on its own when it cannot be taken for a figure. */
  const namesWord = (before: string | undefined, word: string) =>
    wordIds.has(word) && (before !== undefined || findableBare(word));
  // without the g flag, so that test() keeps no position between calls
  const [afterWordTest, bareTest] = [otherAfterWord, otherBare].map((re) =>
    re ? new RegExp(re.source) : null,
  );
  const names = (s: string) => {
    for (const m of s.matchAll(WORDS)) if (namesWord(m[1], m[2])) return true;
    return Boolean(afterWordTest?.test(s) || bareTest?.test(s));
  };
  const text = (value: string, checkKey?: string | null) => {
    // a subject the engine names in quotes (a refusal of a failed rerun, whose ids were never stored) is withheld whatever its id
    let out = value.replace(QUOTED_SUBJECT, (_m, s: string) => `${s === "S" ? "A" : "a"} subject`);
    out = out.replace(WORDS, (m, before: string | undefined, word: string) => {
      if (!namesWord(before, word)) return m;
      return before !== undefined ? replacement(before[0], word, checkKey) : WITHHELD;
    });
    if (otherAfterWord)
      out = out.replace(otherAfterWord, (_m, s: string, id: string) => replacement(s, id, checkKey));
    out = out.replace(row, (_m, s: string, n: string) => replacement(s, `row ${n}`, checkKey));
    return otherBare ? out.replace(otherBare, WITHHELD) : out;
  };
  const leak = (value: unknown): string | null => {
    const stack: unknown[] = [value];
    while (stack.length) {
      const v = stack.pop();
      if (typeof v === "string") {
        if (names(v)) return v;
      } else if (Array.isArray(v)) stack.push(...v);
      else if (v && typeof v === "object") {
        for (const [k, x] of Object.entries(v)) {
          if (SUBJECT_FIELDS.has(k) && typeof x === "string" && ids.has(x)) return x;
          stack.push(x);
        }
      }
    }
    return null;
  };
  return {
    seesSubjects: false,
    text,
    maybe: (v, key) => (v === null ? null : text(v, key)),
    countOnly: (v) => text(withoutNamingClauses(v)),
    flagged: (c) =>
      (c.flagged ?? [])
        .slice(0, 5)
        .map((f) => ({ rank: f.rank, value: f.value, who: `subject ranked ${f.rank}` })),
    leak,
    assertClean(value, what) {
      const leaked = leak(value);
      if (leaked !== null)
        throw new Error(
          `${what} for a viewer without subject-level access still names a subject: ${leaked.slice(0, 80)}`,
        );
      return value;
    },
  };
}

/** The column of a rerun's subject ids: the model's id column, or a repeated-measures model's subject column. */
export function subjectColumnOf(doc: ViewDocument): string | undefined {
  const spec = doc.result.spec;
  return spec.id ?? ("repeated" in spec ? spec.repeated.subject : undefined);
}

/** Every id of the id column of a locked dataset version, or none when the rerun names no id column. */
async function datasetIds(doc: ViewDocument, datasetVersionId: string): Promise<string[]> {
  const idColumn = subjectColumnOf(doc);
  if (!idColumn) return [];
  try {
    const { table } = await loadLockedTable(datasetVersionId);
    return table.columns[idColumn] ?? [];
  } catch {
    // The ids of the rows the rerun used are enough to keep the answer clean.
    return [];
  }
}

/** A redaction for answers about these reruns, with every id of their locked datasets. */
export async function redactionFor(
  seesSubjects: boolean,
  reruns: readonly { doc: ViewDocument | null; datasetVersionId: string }[],
): Promise<Redaction> {
  if (seesSubjects) return IDENTITY;
  const more: string[] = [];
  const seen = new Set<string>();
  for (const r of reruns) {
    if (!r.doc || seen.has(r.datasetVersionId)) continue;
    seen.add(r.datasetVersionId);
    more.push(...(await datasetIds(r.doc, r.datasetVersionId)));
  }
  return redaction(
    false,
    reruns.map((r) => r.doc),
    more,
  );
}

/** The same, for reruns known by id (a deviation log, a list). */
export async function redactionForReruns(
  seesSubjects: boolean,
  rerunIds: readonly string[],
): Promise<Redaction> {
  if (seesSubjects) return IDENTITY;
  const unique = [...new Set(rerunIds)];
  const rows = unique.length
    ? await db
        .select({
          id: t.reruns.id,
          resultSha256: t.reruns.resultSha256,
          datasetVersionId: t.reruns.datasetVersionId,
        })
        .from(t.reruns)
        .where(inArray(t.reruns.id, unique))
    : [];
  return redactionFor(
    false,
    await Promise.all(
      rows.map(async (r) => ({ doc: await storedRerunDocument(r), datasetVersionId: r.datasetVersionId })),
    ),
  );
}
