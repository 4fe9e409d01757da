/**
 * Subject identifiers out of check, finding and assessment text, for people who may not see
 * subject-level data. The engine's texts name subjects ("largest Cook's distance 0.322
 * (subject QMT301-0217)", "row 17"); these become the subject's rank among the flagged
 * subjects of that check, or "a subject" when it is not flagged. A bare identifier in free text
 * (an assessment's rationale) becomes "a subject". The identifiers looked for are the rerun's
 * own observations, so no pattern guesses what an identifier looks like.
 */
import type { RerunDocument } from "../reruns/reruns.server";

const escape = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, "\\$&");

/** Identifiers that are plain numbers cannot be told from figures in free text; they are caught after "subject". */
const findableBare = (id: string) => id.length >= 4 && !/^[\d.]+$/.test(id);

export interface Redactor {
  /** The text with every subject named by rank within the check (when known). */
  text(value: string, checkKey?: string | null): string;
  /** The first string anywhere in the value that still names one of the rerun's subjects. */
  leak(value: unknown): string | null;
}

export function subjectRedactor(docs: RerunDocument[]): Redactor {
  const ids = new Set<string>();
  const rankOf = new Map<string, Map<string, number>>();
  for (const doc of docs) {
    for (const id of doc.result.observations.id) if (id) ids.add(id);
    for (const c of doc.checks) {
      const ranks = rankOf.get(c.key) ?? new Map<string, number>();
      for (const f of c.flagged ?? []) ranks.set(f.id ?? `row ${f.row}`, f.rank);
      rankOf.set(c.key, ranks);
    }
  }
  // Longest first, so an identifier that is a prefix of another never leaves a tail behind.
  const sorted = [...ids].sort((a, b) => b.length - a.length);
  const alternatives = (list: string[]) => list.map(escape).join("|");
  const afterWord = sorted.length ? new RegExp(`\\bsubject (${alternatives(sorted)})(?![A-Za-z0-9_-])`, "g") : null;
  const bareList = sorted.filter(findableBare);
  const bare = bareList.length ? new RegExp(`(?<![A-Za-z0-9_-])(${alternatives(bareList)})(?![A-Za-z0-9_-])`, "g") : null;
  const row = /\brow (\d+)\b/g;
  const replacement = (who: string, checkKey?: string | null) => {
    const rank = checkKey ? rankOf.get(checkKey)?.get(who) : undefined;
    return rank ? `the subject ranked ${rank}` : "a subject";
  };
  const names = (s: string) => Boolean((afterWord && new RegExp(afterWord.source).test(s)) || (bare && new RegExp(bare.source).test(s)));
  return {
    text(value, checkKey) {
      let out = afterWord ? value.replace(afterWord, (_m, id: string) => replacement(id, checkKey)) : value;
      out = out.replace(row, (_m, n: string) => replacement(`row ${n}`, checkKey));
      return bare ? out.replace(bare, "a subject") : out;
    },
    leak(value) {
      const stack: unknown[] = [value];
      while (stack.length) {
        const v = stack.pop();
        if (typeof v === "string") {
          if (names(v)) return v;
        } else if (Array.isArray(v)) stack.push(...v);
        else if (v && typeof v === "object") stack.push(...Object.values(v));
      }
      return null;
    },
  };
}
