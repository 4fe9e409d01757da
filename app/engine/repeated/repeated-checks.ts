/**
 * The plan's checks evaluated on a repeated-measures (MMRM) rerun (repeated-check-catalogue.ts):
 * the covariance structure used against the plan's list, normality and equal spread of the
 * normalized residuals, influential subjects, and the subjects contributing at the primary visit.
 * Each ends as within plan, finding or not computed. Pure: no I/O.
 */
import {
  CHECK_BY_KEY,
  fmt,
  kText,
  notComputed,
  distributionWords,
  pWords,
  type CheckDefinition,
  type CheckOutcome,
  type FlaggedObservation,
  type PlannedCheck,
} from "../checks";
import { shapiroWilk } from "../normality";
import { brownForsythe } from "../spread";
import type { RepeatedResult } from "./repeated-model";
import type { CovarianceStructureName } from "./repeated-spec";
import { COVARIANCE_STRUCTURE_WORDS } from "./repeated-names";

const plural = (n: number, word: string) => `${n} ${word}${n === 1 ? "" : "s"}`;
const listWords = (xs: string[]) =>
  xs.length < 2 ? xs.join("") : `${xs.slice(0, -1).join(", ")} and ${xs.at(-1)}`;

/** The plan's structures in the order the fit tries them: the planned one, then each fallback once. */
function plannedOrder(r: RepeatedResult): CovarianceStructureName[] {
  const { covariance, fallback } = r.spec.repeated;
  return [covariance, ...fallback.filter((s, i) => s !== covariance && fallback.indexOf(s) === i)];
}

function convergence(def: CheckDefinition, pc: PlannedCheck, r: RepeatedResult): CheckOutcome {
  const k = pc.threshold;
  const c = r.covariance;
  const position = plannedOrder(r).indexOf(c.structure) + 1;
  const threshold = `position in the plan's list > ${kText(k)}`;
  if (position < 1)
    return notComputed(
      def,
      pc,
      threshold,
      `Not computed: the structure used (${COVARIANCE_STRUCTURE_WORDS[c.structure]}) is not in the plan's list.`,
    );
  const passedOver = c.attempts.filter((a) => a.reason !== null);
  const finding = !c.converged || position > k;
  const why = passedOver.map((a) => `${COVARIANCE_STRUCTURE_WORDS[a.structure]}: ${a.reason}`).join("; ");
  const used = COVARIANCE_STRUCTURE_WORDS[c.structure];
  const plannedWords = COVARIANCE_STRUCTURE_WORDS[c.planned];
  return {
    key: def.key,
    label: def.label,
    outcome: finding ? "finding" : "within",
    statistic: `${c.converged ? "converged" : "did not converge"} with the ${used} structure, position ${position} of ${plannedOrder(r).length} in the plan's list (planned: ${plannedWords})`,
    threshold,
    summary: !c.converged
      ? "The fit did not converge; its estimates are not those of the plan."
      : position > k
        ? `The fit used the ${used} structure, not ${k === 1 ? `the planned ${plannedWords} structure` : `one of the first ${kText(k)} of the plan's list`}${why ? ` (${why})` : ""}.`
        : position === 1
          ? "The planned structure converged and was used."
          : `The fit used the plan's fallback ${used} structure, within the first ${kText(k)} of its list${why ? ` (${why})` : ""}.`,
    remedy: pc.remedy,
    figure: def.figure,
    value: position,
    numbers: {
      measure: "position of the structure used in the plan's list (1: the planned structure)",
      statistic: position,
      df: null,
      threshold: k,
      compares: "statistic above",
      p: null,
    },
  };
}

function normality(def: CheckDefinition, pc: PlannedCheck, r: RepeatedResult): CheckOutcome {
  const k = pc.threshold;
  const residuals = r.observations.normalizedResidual;
  const test = shapiroWilk(residuals);
  if (test.statistic === null || test.p === null)
    return notComputed(
      def,
      pc,
      `p < ${kText(k)}`,
      test.reason ? `Not computed: ${test.reason}.` : "Not computed for this fit.",
    );
  const finding = test.p < k;
  const measure = "Shapiro–Wilk statistic of the normalized residuals";
  return {
    key: def.key,
    label: def.label,
    outcome: finding ? "finding" : "within",
    statistic: `Shapiro–Wilk statistic ${fmt(test.statistic)}, ${pWords(test.p)} (${plural(residuals.length, "normalized residual")})`,
    threshold: `p < ${kText(k)}`,
    summary: finding
      ? "The normalized residuals depart from normality at the planned level; judge the size of the departure on the Q-Q plot, since large samples reject small departures."
      : "The normalized residuals do not depart from normality at the planned level.",
    remedy: pc.remedy,
    figure: def.figure,
    value: test.p,
    numbers: {
      measure,
      statistic: test.statistic,
      df: null,
      threshold: k,
      compares: "p below",
      p: test.p,
    },
  };
}

/** Each record's cell: visit by arm, or visit alone when the model names no categorical treatment. */
function cells(r: RepeatedResult): { codes: Int32Array; count: number; byVisitOnly: boolean } {
  const o = r.observations;
  const byVisitOnly = o.level.every((l) => l === null);
  const index = new Map<string, number>();
  const codes = Int32Array.from(o.visit, (visit, i) => {
    const key = byVisitOnly ? visit : `${visit}\u0000${o.level[i]}`;
    let c = index.get(key);
    if (c === undefined) {
      c = index.size;
      index.set(key, c);
    }
    return c;
  });
  return { codes, count: index.size, byVisitOnly };
}

function spread(def: CheckDefinition, pc: PlannedCheck, r: RepeatedResult): CheckOutcome {
  const k = pc.threshold;
  const { codes, count, byVisitOnly } = cells(r);
  const cellWords = byVisitOnly ? "visits" : "visit-by-arm cells";
  if (count < 2) return notComputed(def, pc, `p < ${kText(k)}`, `Not computed: fewer than two ${cellWords}.`);
  const test = brownForsythe(r.observations.normalizedResidual, codes, count);
  if (test.statistic === null || test.p === null || test.df1 === null || test.df2 === null)
    return notComputed(
      def,
      pc,
      `p < ${kText(k)}`,
      `Not computed: ${test.reason ?? "the statistic is undefined for this fit"}.`,
    );
  const finding = test.p < k;
  const measure = `Brown–Forsythe statistic of the normalized residuals across ${count} ${cellWords}`;
  return {
    key: def.key,
    label: def.label,
    outcome: finding ? "finding" : "within",
    statistic: `Brown–Forsythe statistic ${fmt(test.statistic)} ${distributionWords("F", [test.df1, test.df2])}, ${pWords(test.p)} (normalized residuals across ${count} ${cellWords})`,
    threshold: `p < ${kText(k)}`,
    summary: finding
      ? `The spread of the normalized residuals differs across the ${cellWords} at the planned level; judge the residual plot by visit.`
      : `The spread of the normalized residuals does not differ across the ${cellWords} at the planned level.`,
    remedy: pc.remedy,
    figure: def.figure,
    value: test.p,
    numbers: {
      measure,
      statistic: test.statistic,
      df: [test.df1, test.df2],
      threshold: k,
      compares: "p below",
      p: test.p,
    },
  };
}

/** Each subject's data rows, ascending, from the records used. */
function rowsBySubject(r: RepeatedResult): Map<string, number[]> {
  const out = new Map<string, number[]>();
  r.observations.id.forEach((id, i) => {
    const rows = out.get(id) ?? [];
    rows.push(r.observations.row[i]);
    out.set(id, rows);
  });
  for (const rows of out.values()) rows.sort((a, b) => a - b);
  return out;
}

function influence(def: CheckDefinition, pc: PlannedCheck, r: RepeatedResult): CheckOutcome {
  const k = pc.threshold;
  const m = r.subjects.length;
  const bound = k / m;
  const threshold = `${kText(k)}/m = ${kText(k)}/${m} = ${fmt(bound, 4)}`;
  const rowsOf = rowsBySubject(r);
  const list: Omit<FlaggedObservation, "rank">[] = [];
  let worst: (typeof r.subjects)[number] | null = null;
  for (const s of r.subjects) {
    if (!Number.isFinite(s.cooksDistance)) continue;
    if (!worst || s.cooksDistance > worst.cooksDistance) worst = s;
    if (s.cooksDistance > bound) {
      const rows = rowsOf.get(s.id) ?? [];
      list.push({ row: rows[0], id: s.id, value: s.cooksDistance, rows });
    }
  }
  if (!worst)
    return notComputed(def, pc, threshold, "Not computed: no subject's Cook's distance could be computed.");
  list.sort((a, b) => b.value - a.value || a.row - b.row);
  const flagged = list.map((o, i) => ({ rank: i + 1, ...o }));
  const measure = "largest subject Cook's distance";
  return {
    key: def.key,
    label: def.label,
    outcome: flagged.length ? "finding" : "within",
    statistic: `${measure} ${fmt(worst.cooksDistance)} (subject ${worst.id}, ${plural(worst.records, "record")})`,
    threshold,
    summary: flagged.length
      ? `${flagged.length} of ${m} subjects exceed the threshold; the most extreme is subject ${flagged[0].id}.`
      : "No subject exceeds the threshold.",
    remedy: pc.remedy,
    figure: def.figure,
    flagged,
    value: worst.cooksDistance,
    numbers: {
      measure,
      statistic: worst.cooksDistance,
      df: null,
      threshold: bound,
      compares: "statistic above",
      p: null,
    },
  };
}

function primaryVisit(def: CheckDefinition, pc: PlannedCheck, r: RepeatedResult): CheckOutcome {
  const k = pc.threshold;
  const visit = r.influence.primaryVisit;
  const o = r.observations;
  const subjectsOf = new Map<string | null, Set<string>>();
  o.id.forEach((id, i) => {
    const set = subjectsOf.get(o.level[i]) ?? new Set<string>();
    set.add(id);
    subjectsOf.set(o.level[i], set);
  });
  const arms = [...subjectsOf.entries()].map(([level, set]) => {
    const at = r.counts.find((c) => c.visit === visit && c.level === level)?.subjects ?? 0;
    return { level, analysed: set.size, at, share: at / set.size };
  });
  if (arms.length === 0)
    return notComputed(def, pc, `< ${kText(k)}`, "Not computed: the fit used no subject.");
  // arms in the order of the counts (the treatment's levels)
  const order = r.counts.map((c) => c.level);
  arms.sort((a, b) => order.indexOf(a.level) - order.indexOf(b.level));
  const worst = arms.reduce((a, b) => (b.share < a.share ? b : a));
  const below = arms.filter((a) => a.share < k);
  const armWords = (a: (typeof arms)[number]) =>
    `${a.level ?? "all subjects"}: ${a.at} of ${a.analysed} subjects`;
  const measure = `smallest share of an arm's analysed subjects with a record at the primary visit (${visit})`;
  return {
    key: def.key,
    label: def.label,
    outcome: below.length ? "finding" : "within",
    statistic: `${measure} ${fmt(worst.share)} (${armWords(worst)})`,
    threshold: `< ${kText(k)}`,
    summary: below.length
      ? `Fewer than the planned share of subjects have a record at ${visit} in ${listWords(below.map((a) => `${a.level ?? "all subjects"} (${a.at} of ${a.analysed})`))}: the contrast there rests on the model's assumption about the missing records.`
      : `In every arm at least the planned share of subjects has a record at ${visit}.`,
    remedy: pc.remedy,
    figure: def.figure,
    value: worst.share,
    numbers: {
      measure,
      statistic: worst.share,
      df: null,
      threshold: k,
      compares: "statistic below",
      p: null,
    },
  };
}

/** Every enabled check of the plan on a repeated-measures rerun; checks of other model kinds end as not computed. */
export function evaluateRepeatedChecks(r: RepeatedResult, planned: readonly PlannedCheck[]): CheckOutcome[] {
  const out: CheckOutcome[] = [];
  for (const pc of planned) {
    if (!pc.enabled) continue;
    const def = CHECK_BY_KEY.get(pc.key);
    if (!def) continue;
    switch (pc.key) {
      case "repeated_convergence":
        out.push(convergence(def, pc, r));
        break;
      case "repeated_normality":
        out.push(normality(def, pc, r));
        break;
      case "repeated_spread":
        out.push(spread(def, pc, r));
        break;
      case "repeated_influence":
        out.push(influence(def, pc, r));
        break;
      case "repeated_primary_visit":
        out.push(primaryVisit(def, pc, r));
        break;
      default:
        out.push(
          notComputed(
            def,
            pc,
            String(pc.threshold),
            "Not computed: this check applies to other kinds of model; the model is a repeated-measures model.",
          ),
        );
    }
  }
  return out;
}
