/**
 * The plan's checks evaluated on a Cox rerun: proportional hazards per term and global,
 * functional form of continuous covariates, influence on the treatment log hazard ratio, and
 * events per coefficient. Each ends as within plan, finding or not computed. Pure: no I/O.
 */
import {
  CHECK_BY_KEY,
  fmt,
  kText,
  notComputed,
  distributionWords,
  formatP,
  type CheckDefinition,
  type CheckOutcome,
  type FlaggedObservation,
  type PlannedCheck,
} from "../checks";
import type { CoxResult } from "./cox-model";
import type { FunctionalFormTest } from "./functional-form";

const pText = (p: number): string => (p < 0.0001 ? "p < 0.0001" : `p = ${p.toFixed(4)}`);

/** The coefficient indices of the treatment term. */
function treatmentCoefficients(r: CoxResult): number[] {
  const t = r.spec.treatment;
  return t ? r.coefficients.flatMap((c, i) => (c.term === t ? [i] : [])) : [];
}

function proportionalHazards(def: CheckDefinition, pc: PlannedCheck, r: CoxResult): CheckOutcome {
  const k = pc.threshold;
  const ph = r.tests.proportionalHazards;
  const g = ph.global;
  if (!Number.isFinite(g.p))
    return notComputed(
      def,
      pc,
      `p < ${kText(k)}`,
      "Not computed: the test statistic is undefined for this fit.",
    );
  const rejected = ph.terms.filter((t) => t.p < k);
  const worst = ph.terms.reduce((a, b) => (b.p < a.p ? b : a), ph.terms[0]);
  const finding = g.p < k || rejected.length > 0;
  return {
    key: def.key,
    label: def.label,
    outcome: finding ? "finding" : "within",
    statistic: `global Grambsch–Therneau statistic ${fmt(g.statistic, 2)} ${distributionWords("χ²", [g.df])}, ${pText(g.p)}${worst ? `; smallest term p ${formatP(worst.p)} (${worst.term})` : ""}`,
    threshold: `p < ${kText(k)}`,
    summary: finding
      ? `The hazards may not be proportional${rejected.length ? ` for ${rejected.map((t) => t.term).join(", ")}` : " (global test)"}; judge the size of the departure on the scaled Schoenfeld plot, since large trials reject trivial departures.`
      : "No term departs from proportional hazards at the planned level.",
    remedy: pc.remedy,
    figure: def.figure,
    value: g.p,
    numbers: {
      measure: "global Grambsch–Therneau statistic",
      statistic: g.statistic,
      df: [g.df],
      threshold: k,
      compares: "p below",
      p: g.p,
    },
  };
}

function functionalForm(
  def: CheckDefinition,
  pc: PlannedCheck,
  tests: readonly FunctionalFormTest[],
): CheckOutcome {
  const k = pc.threshold;
  const done = tests.filter(
    (t): t is FunctionalFormTest & { p: number; statistic: number } => t.p !== null && t.statistic !== null,
  );
  if (done.length === 0) {
    const reason = tests.find((t) => t.reason)?.reason;
    return notComputed(
      def,
      pc,
      `p < ${kText(k)}`,
      reason ? `Not computed: ${reason}.` : "Not computed: the model has no continuous covariate.",
    );
  }
  const worst = done.reduce((a, b) => (b.p < a.p ? b : a));
  const over = done.filter((t) => t.p < k);
  return {
    key: def.key,
    label: def.label,
    outcome: over.length ? "finding" : "within",
    statistic: `smallest ${pText(worst.p)} (${worst.term}: likelihood-ratio statistic ${fmt(worst.statistic, 2)} ${distributionWords("χ²", [1])})`,
    threshold: `p < ${kText(k)}`,
    summary: over.length
      ? `A squared term improves the fit for ${over.map((t) => t.term).join(", ")}: the log hazard may not be linear in ${over.length > 1 ? "these covariates" : "this covariate"}.`
      : "No continuous covariate departs from a log-linear effect at the planned level.",
    remedy: pc.remedy,
    figure: def.figure,
    value: worst.p,
    numbers: {
      measure: `likelihood-ratio statistic of the squared term, ${worst.term}`,
      statistic: worst.statistic,
      df: [1],
      threshold: k,
      compares: "p below",
      p: worst.p,
    },
  };
}

function influence(def: CheckDefinition, pc: PlannedCheck, r: CoxResult): CheckOutcome {
  const k = pc.threshold;
  const n = r.n;
  const bound = k / Math.sqrt(n);
  const threshold = `${kText(k)}/√n = ${fmt(bound, 4)}`;
  const idx = treatmentCoefficients(r);
  if (idx.length === 0)
    return notComputed(def, pc, `${kText(k)}/√n`, "Not computed: the model names no treatment.");
  const obs = r.observations;
  const worst = obs.row.map((_, i) => {
    let m = 0;
    for (const j of idx) if (Math.abs(obs.dfbetas[j][i]) > Math.abs(m)) m = obs.dfbetas[j][i];
    return m;
  });
  const list: Omit<FlaggedObservation, "rank">[] = [];
  worst.forEach((v, i) => {
    if (Number.isFinite(v) && Math.abs(v) > bound) list.push({ row: obs.row[i], id: obs.id[i], value: v });
  });
  list.sort((a, b) => Math.abs(b.value) - Math.abs(a.value) || a.row - b.row);
  const flagged = list.map((o, i) => ({ rank: i + 1, ...o }));
  let maxIndex = -1;
  worst.forEach((v, i) => {
    if (Number.isFinite(v) && (maxIndex < 0 || Math.abs(v) > Math.abs(worst[maxIndex]))) maxIndex = i;
  });
  const who = (o: { id: string | null; row: number }) => (o.id ? `subject ${o.id}` : `row ${o.row}`);
  return {
    key: def.key,
    label: def.label,
    outcome: flagged.length ? "finding" : "within",
    statistic:
      maxIndex >= 0
        ? `largest absolute DFBETAS on the treatment effect ${fmt(Math.abs(worst[maxIndex]))}${worst[maxIndex] < 0 ? ", negative" : worst[maxIndex] > 0 ? ", positive" : ""} (${who({ id: obs.id[maxIndex], row: obs.row[maxIndex] })})`
        : "largest absolute DFBETAS on the treatment effect —",
    threshold,
    summary: flagged.length
      ? `${flagged.length} of ${n} subjects exceed the threshold; the most extreme is ${who(flagged[0])}.`
      : "No subject exceeds the threshold.",
    remedy: pc.remedy,
    figure: def.figure,
    flagged,
    value: maxIndex >= 0 ? worst[maxIndex] : null,
    numbers: {
      measure: "largest absolute DFBETAS on the treatment effect",
      statistic: maxIndex >= 0 ? Math.abs(worst[maxIndex]) : null,
      df: null,
      threshold: bound,
      compares: "statistic above",
      p: null,
    },
  };
}

function eventsPerCoefficient(def: CheckDefinition, pc: PlannedCheck, r: CoxResult): CheckOutcome {
  const k = pc.threshold;
  const epc = r.fit.eventsPerCoefficient;
  const finding = epc < k;
  return {
    key: def.key,
    label: def.label,
    outcome: finding ? "finding" : "within",
    statistic: `${fmt(epc, 1)} events per estimated coefficient (${r.fit.events} events, ${r.coefficients.length} coefficients)`,
    threshold: `< ${kText(k)}`,
    summary: finding
      ? "Fewer events per coefficient than planned: log hazard ratios may be biased away from zero and intervals too narrow."
      : "Enough events per estimated coefficient.",
    remedy: pc.remedy,
    figure: def.figure,
    value: epc,
    numbers: {
      measure: "events per estimated coefficient",
      statistic: epc,
      df: null,
      threshold: k,
      compares: "statistic below",
      p: null,
    },
  };
}

/** Every enabled check of the plan on a Cox rerun; checks of other model kinds end as not computed. */
export function evaluateCoxChecks(
  r: CoxResult,
  planned: readonly PlannedCheck[],
  functionalFormTests: readonly FunctionalFormTest[],
): CheckOutcome[] {
  const out: CheckOutcome[] = [];
  for (const pc of planned) {
    if (!pc.enabled) continue;
    const def = CHECK_BY_KEY.get(pc.key);
    if (!def) continue;
    switch (pc.key) {
      case "proportional_hazards":
        out.push(proportionalHazards(def, pc, r));
        break;
      case "functional_form_cox":
        out.push(functionalForm(def, pc, functionalFormTests));
        break;
      case "dfbetas_treatment_cox":
        out.push(influence(def, pc, r));
        break;
      case "events_per_coefficient":
        out.push(eventsPerCoefficient(def, pc, r));
        break;
      default:
        out.push(
          notComputed(
            def,
            pc,
            String(pc.threshold),
            "Not computed: this check applies to linear and generalized linear models; the model is a Cox model.",
          ),
        );
    }
  }
  return out;
}
