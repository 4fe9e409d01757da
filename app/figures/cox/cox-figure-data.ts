/**
 * The rows behind the time-to-event (Cox) figures of a rerun, shaped from the stored result
 * (and, for martingale residuals against a covariate, from the rerun's own table rows). The
 * specifications that draw them live beside this file.
 */
import type { CoxFigureData, CoxInfluenceRow, SurvivalStep } from "./cox-figure-types";
import { BEYOND, WITHIN, type SubjectRef } from "../shared/types";
import type { CheckKey, FigureKey } from "~/engine/checks";
import { loessCurve } from "~/engine/loess";
import type { CoxResult } from "~/engine/survival/cox-model";
import { continuousCoxTerms } from "~/engine/survival/functional-form";
import { round } from "../shared/summaries";
import {
  appliedThreshold,
  FigureUnavailableError,
  type FigureOptions,
  type FigureSource,
} from "../shared/source";

/** The Cox figures that plot covariate values read the rerun's rows. */
export const COX_NEEDS_TABLE: readonly FigureKey[] = ["martingale_covariate"];

function who(r: CoxResult, i: number, withIds: boolean): SubjectRef {
  if (!withIds) return { subject: null, row: null };
  const row = r.observations.row[i];
  return { subject: r.observations.id[i] ?? `row ${row}`, row };
}

function flaggedRows(doc: FigureSource, key: CheckKey): Set<number> {
  return new Set((doc.checks.find((c) => c.key === key)?.flagged ?? []).map((f) => f.row));
}

const smooth = (x: readonly number[], y: readonly number[]) =>
  loessCurve(x, y, 0.5, 120).map((p) => ({ x: round(p.x), y: round(p.y) }));

/** Regular times for the numbers at risk: about six from zero to the last follow-up time. */
export function atRiskTimes(maxTime: number): number[] {
  if (!(maxTime > 0)) return [0];
  const raw = maxTime / 5;
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 2.5, 5, 10].map((m) => m * power).find((s) => s >= raw) ?? raw;
  const out: number[] = [];
  for (let t = 0; t <= maxTime + 1e-9; t += step) out.push(Number(t.toPrecision(12)));
  return out;
}

/** The Kaplan–Meier curves of the arms over all strata (the model's strata have their own curves in the result). */
function armCurves(r: CoxResult) {
  return r.survival.filter((s) => s.stratum === null).map((s) => ({ ...s, arm: s.level ?? "All subjects" }));
}

/** The rows of one Cox figure of a rerun. Throws FigureUnavailableError when it cannot be drawn. */
export function coxFigureData(
  doc: FigureSource,
  r: CoxResult,
  figure: FigureKey,
  opts: FigureOptions,
): CoxFigureData {
  const unit = opts.units?.[r.spec.response] ?? `units of ${r.spec.response}`;
  const base = {
    n: r.n,
    withSubjectIds: opts.withSubjectIds,
    response: r.spec.response,
    responseUnit: unit,
    weighted: false,
  };
  const obs = r.observations;
  switch (figure) {
    case "kaplan_meier": {
      const curves = armCurves(r);
      const rows: SurvivalStep[] = curves.flatMap((c) => [
        { arm: c.arm, time: 0, estimate: 1, lower: 1, upper: 1, atRisk: c.atRisk[0] ?? 0, events: 0 },
        ...c.time.map((time, k) => ({
          arm: c.arm,
          time,
          estimate: c.estimate[k],
          lower: c.lower[k],
          upper: c.upper[k],
          atRisk: c.atRisk[k],
          events: c.events[k],
        })),
      ]);
      const maxTime = Math.max(0, ...curves.flatMap((c) => c.time));
      const atRisk = curves.flatMap((c) =>
        atRiskTimes(maxTime).map((time) => {
          const k = c.time.findIndex((t) => t >= time);
          return { arm: c.arm, time, atRisk: k < 0 ? 0 : c.atRisk[k] };
        }),
      );
      const lr = r.tests.logRank;
      return {
        figure,
        ...base,
        withSubjectIds: false,
        treatment: r.spec.treatment ?? null,
        arms: curves.map((c) => c.arm),
        rows,
        atRisk,
        logRank: lr ? { statistic: lr.statistic, df: lr.df, p: lr.p, stratified: r.strata.length > 0 } : null,
      };
    }
    case "log_minus_log": {
      const curves = armCurves(r);
      const rows = curves.flatMap((c) =>
        c.time.flatMap((time, k) => {
          const s = c.estimate[k];
          return time > 0 && s > 0 && s < 1 && c.events[k] > 0
            ? [
                {
                  arm: c.arm,
                  time,
                  logTime: round(Math.log(time)),
                  logMinusLog: round(Math.log(-Math.log(s))),
                },
              ]
            : [];
        }),
      );
      return {
        figure,
        ...base,
        withSubjectIds: false,
        treatment: r.spec.treatment ?? null,
        arms: curves.map((c) => c.arm),
        rows,
      };
    }
    case "schoenfeld": {
      const names = r.coefficients.map((c) => c.name);
      const j = opts.term === undefined ? 0 : names.indexOf(opts.term);
      if (j < 0)
        throw new FigureUnavailableError(
          `"${opts.term}" is not a coefficient of this model (coefficients: ${names.join(", ")})`,
        );
      const coefficient = r.coefficients[j];
      const termTest = r.tests.proportionalHazards.terms.find((t) => t.term === coefficient.term) ?? null;
      const index = new Map(obs.row.map((row, i) => [row, i]));
      const rows = r.schoenfeld.map((s) => {
        const i = index.get(s.row) ?? -1;
        return {
          ...(i >= 0 ? who(r, i, opts.withSubjectIds) : { subject: null, row: null }),
          time: round(s.time),
          scaled: round(s.scaled[j]),
          status: WITHIN as typeof WITHIN,
        };
      });
      return {
        figure,
        ...base,
        term: coefficient.name,
        coefficient: coefficient.estimate,
        test: termTest
          ? { term: termTest.term, statistic: termTest.statistic, df: termTest.df, p: termTest.p }
          : null,
        transform: { km: "Kaplan–Meier", rank: "rank", identity: "time", log: "log time" }[
          r.tests.proportionalHazards.transform
        ],
        rows,
        smooth: smooth(
          r.schoenfeld.map((s) => s.time),
          r.schoenfeld.map((s) => s.scaled[j]),
        ),
      };
    }
    case "martingale_covariate": {
      const terms = continuousCoxTerms(r);
      const term = opts.term ?? terms[0];
      if (!term) throw new FigureUnavailableError("the model has no continuous covariate");
      if (!terms.includes(term))
        throw new FigureUnavailableError(
          `"${term}" is not a continuous covariate of this model (continuous: ${terms.join(", ") || "none"})`,
        );
      if (!opts.table)
        throw new FigureUnavailableError("the martingale residual figure needs the rerun's table rows");
      const cells = opts.table.columns[term];
      if (!cells) throw new FigureUnavailableError(`column "${term}" is not in the rerun's data`);
      const at = new Map(opts.table.rowNumbers.map((row, i) => [row, i]));
      const x = obs.row.map((row) => Number(cells[at.get(row) ?? -1]?.trim()));
      const test = doc.coxFunctionalForm?.find((f) => f.term === term) ?? null;
      const influential = flaggedRows(doc, "dfbetas_treatment_cox");
      return {
        figure,
        ...base,
        term,
        termUnit: opts.units?.[term] ?? `units of ${term}`,
        test: test ? { statistic: test.statistic, p: test.p } : null,
        rows: obs.row.map((row, i) => ({
          ...who(r, i, opts.withSubjectIds),
          x: round(x[i]),
          martingale: round(obs.martingale[i]),
          status: influential.has(row) ? BEYOND : WITHIN,
        })),
        smooth: smooth(x, obs.martingale),
      };
    }
    case "cox_influence": {
      const t = r.spec.treatment;
      const idx = t ? r.coefficients.flatMap((c, j) => (c.term === t ? [j] : [])) : [];
      if (idx.length === 0)
        throw new FigureUnavailableError(
          "the model names no treatment, so there is no treatment effect to be moved",
        );
      const threshold = appliedThreshold(doc, "dfbetas_treatment_cox");
      const flagged = flaggedRows(doc, "dfbetas_treatment_cox");
      const worst = obs.row.map((_, i) =>
        idx.reduce((m, j) => (Math.abs(obs.dfbetas[j][i]) > Math.abs(m) ? obs.dfbetas[j][i] : m), 0),
      );
      const top = obs.row
        .map((_, i) => i)
        .filter((i) => flagged.has(obs.row[i]))
        .sort((a, b) => Math.abs(worst[b]) - Math.abs(worst[a]) || a - b)
        .slice(0, 3);
      const rows: CoxInfluenceRow[] = obs.row.map((row, i) => ({
        ...who(r, i, opts.withSubjectIds),
        order: i + 1,
        dfbetas: round(worst[i]),
        status: flagged.has(row) ? BEYOND : WITHIN,
        label: top.includes(i)
          ? opts.withSubjectIds
            ? (obs.id[i] ?? `row ${row}`)
            : `rank ${top.indexOf(i) + 1}`
          : null,
        labelRank: top.includes(i) ? top.indexOf(i) + 1 : null,
      }));
      return { figure, ...base, coefficients: idx.map((j) => r.coefficients[j].name), threshold, rows };
    }
    default:
      throw new FigureUnavailableError(
        `the ${figure} figure is drawn for linear and generalized linear models; this rerun fits a Cox model`,
      );
  }
}

/** The figures a Cox rerun's results page and appendix show, with their covariate or coefficient. */
export function coxFigureList(r: CoxResult): { figure: FigureKey; term?: string }[] {
  return [
    { figure: "kaplan_meier" },
    { figure: "log_minus_log" },
    ...r.coefficients.map((c) => ({ figure: "schoenfeld" as const, term: c.name })),
    ...continuousCoxTerms(r).map((term) => ({ figure: "martingale_covariate" as const, term })),
    ...(r.spec.treatment ? [{ figure: "cox_influence" as const }] : []),
  ];
}
