import { Link } from "react-router";
import { MULTIPLICITY_WORDS, type TreatmentEffectPlan } from "./treatment-effect";
import type { ReactNode } from "react";
import { fmt, fmtCi, fmtP } from "~/shared/format";
import { CHECK_OUTCOME, type StatusWord } from "~/shared/status-words";
import { StatusLabel } from "./status";
import { TableScroll } from "./table-scroll";

interface Coefficient {
  name: string;
  estimate: number;
  se: number;
  statistic: number;
  p: number;
  lower: number;
  upper: number;
}

/** `scale` names what the estimates measure for a z statistic ("the link scale" unless given). */
export function CoefficientTable({
  rows,
  covarianceType,
  df,
  statisticName = "t",
  scale = "the link scale",
}: {
  rows: readonly Coefficient[];
  covarianceType: string;
  df: number;
  statisticName?: "t" | "z";
  scale?: string;
}) {
  return (
    <TableScroll label="Coefficients">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          Estimates with {covarianceType === "model" ? "model-based" : covarianceType} standard errors;{" "}
          {statisticName === "t"
            ? `t on ${df} residual degrees of freedom; 95% confidence intervals.`
            : `Wald z on ${scale}; 95% Wald intervals.`}
        </caption>
        <thead>
          <tr>
            <th scope="col">Coefficient</th>
            <th scope="col" className="text-right">
              Estimate
            </th>
            <th scope="col" className="text-right">
              SE
            </th>
            <th scope="col" className="text-right">
              {statisticName}
            </th>
            <th scope="col" className="text-right">
              p
            </th>
            <th scope="col" className="text-right">
              95% CI
            </th>
          </tr>
        </thead>
        <tbody>
          {rows.map((c) => (
            <tr key={c.name}>
              <th scope="row" className="text-left font-normal">
                {c.name}
              </th>
              <td className="num text-right">{fmt(c.estimate)}</td>
              <td className="num text-right">{fmt(c.se)}</td>
              <td className="num text-right">{fmt(c.statistic, 2)}</td>
              <td className="num text-right">{fmtP(c.p)}</td>
              <td className="num text-right whitespace-nowrap">{fmtCi(c.lower, c.upper)}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

interface Mean {
  level: string;
  estimate: number;
  se: number;
  lower: number;
  upper: number;
  hc3: { se: number; lower: number; upper: number };
}

export function AdjustedMeansTable({ rows, weighting }: { rows: readonly Mean[]; weighting: string | null }) {
  return (
    <TableScroll label="Adjusted means">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          Adjusted means: continuous covariates at their mean over the rows used; other factors weighted{" "}
          {weighting === "proportional" ? "by observed proportions" : "equally over their levels"}.
        </caption>
        <thead>
          <tr>
            <th scope="col">Arm</th>
            <th scope="col" className="text-right">
              Adjusted mean
            </th>
            <th scope="col" className="text-right">
              SE
            </th>
            <th scope="col" className="text-right">
              95% CI
            </th>
            <th scope="col" className="text-right">
              HC3 95% CI
            </th>
          </tr>
        </thead>
        <tbody>
          {rows.map((m) => (
            <tr key={m.level}>
              <th scope="row" className="text-left font-normal">
                {m.level}
              </th>
              <td className="num text-right">{fmt(m.estimate)}</td>
              <td className="num text-right">{fmt(m.se)}</td>
              <td className="num text-right whitespace-nowrap">{fmtCi(m.lower, m.upper)}</td>
              <td className="num text-right whitespace-nowrap">{fmtCi(m.hc3.lower, m.hc3.upper)}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

interface ContrastRow {
  label: string;
  estimate: number;
  se: number;
  lower: number;
  upper: number;
  p: number;
  pAdjusted?: number;
  hc3: { se: number; lower: number; upper: number; p: number; pAdjusted?: number } | null;
  /** "log" for a ratio, whose SEs are those of the log ratio. */
  seScale?: "response" | "log";
}

/** An SE cell: a ratio's SE is that of its logarithm, and says so. */
function SeCell({ se, scale }: { se: number | null | undefined; scale?: "response" | "log" }) {
  return (
    <td className="num text-right whitespace-nowrap">
      {fmt(se)}
      {scale === "log" && se !== null && se !== undefined ? (
        <span className="text-xs text-ink-soft"> (log)</span>
      ) : null}
    </td>
  );
}

export function ContrastsTable({
  rows,
  kind = "linear",
  plan,
}: {
  rows: readonly ContrastRow[];
  kind?: "linear" | "glm";
  plan?: Pick<TreatmentEffectPlan, "contrastSet" | "multiplicity">;
}) {
  const robust = kind === "linear" ? "HC3" : "Robust";
  const against =
    plan?.contrastSet === "pairwise" ? "between every pair of arms" : "against the reference arm";
  const adjusted = plan && plan.multiplicity !== "none" ? MULTIPLICITY_WORDS[plan.multiplicity] : null;
  return (
    <TableScroll label="Treatment contrasts">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          {kind === "linear"
            ? `Treatment contrasts ${against} (difference in adjusted means).`
            : `Marginal treatment effects ${against} by standardization over the rows used (delta-method SE, Ge et al. 2011; robust SE valid under misspecification, Ye et al. 2023). A ratio's SE, marked (log), is that of the log ratio; its estimate and interval are ratios.`}
          {adjusted
            ? ` Adjusted p: ${adjusted} method, within each family of contrasts${kind === "glm" ? " of one measure" : ""}.`
            : ""}
        </caption>
        <thead>
          <tr>
            <th scope="col">Contrast</th>
            <th scope="col" className="text-right">
              {kind === "linear" ? "Difference" : "Estimate"}
            </th>
            <th scope="col" className="text-right">
              SE
            </th>
            <th scope="col" className="text-right">
              95% CI
            </th>
            <th scope="col" className="text-right">
              p
            </th>
            {adjusted ? (
              <th scope="col" className="text-right">
                p adjusted ({adjusted})
              </th>
            ) : null}
            <th scope="col" className="text-right">
              {robust} SE
            </th>
            <th scope="col" className="text-right">
              {robust} 95% CI
            </th>
            <th scope="col" className="text-right">
              {robust} p
            </th>
            {adjusted ? (
              <th scope="col" className="text-right">
                {robust} p adjusted
              </th>
            ) : null}
          </tr>
        </thead>
        <tbody>
          {rows.map((c) => (
            <tr key={c.label}>
              <th scope="row" className="text-left font-normal">
                {c.label}
              </th>
              <td className="num text-right font-semibold">{fmt(c.estimate)}</td>
              <SeCell se={c.se} scale={c.seScale} />
              <td className="num text-right whitespace-nowrap">{fmtCi(c.lower, c.upper)}</td>
              <td className="num text-right">{fmtP(c.p)}</td>
              {adjusted ? <td className="num text-right">{fmtP(c.pAdjusted)}</td> : null}
              <SeCell se={c.hc3?.se} scale={c.seScale} />
              <td className="num text-right whitespace-nowrap">
                {c.hc3 ? fmtCi(c.hc3.lower, c.hc3.upper) : "does not apply"}
              </td>
              <td className="num text-right">{fmtP(c.hc3?.p)}</td>
              {adjusted ? <td className="num text-right">{fmtP(c.hc3?.pAdjusted)}</td> : null}
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

interface MarginalMean {
  level: string;
  estimate: number;
  se: number;
  lower: number;
  upper: number;
  robustSe: number | null;
}

export function MarginalMeansTable({ rows, family }: { rows: readonly MarginalMean[]; family: string }) {
  return (
    <TableScroll label="Standardized means by arm">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          Standardized {family === "binomial" ? "risk" : "expected count"} per arm: every subject's prediction
          under each arm, averaged over the rows used.
        </caption>
        <thead>
          <tr>
            <th scope="col">Arm</th>
            <th scope="col" className="text-right">
              {family === "binomial" ? "Risk" : "Mean count"}
            </th>
            <th scope="col" className="text-right">
              SE
            </th>
            <th scope="col" className="text-right">
              95% CI
            </th>
            <th scope="col" className="text-right">
              Robust SE
            </th>
          </tr>
        </thead>
        <tbody>
          {rows.map((m) => (
            <tr key={m.level}>
              <th scope="row">{m.level}</th>
              <td className="num text-right">{fmt(m.estimate)}</td>
              <td className="num text-right">{fmt(m.se)}</td>
              <td className="num text-right whitespace-nowrap">{fmtCi(m.lower, m.upper)}</td>
              <td className="num text-right">{fmt(m.robustSe)}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

interface CalibrationGroup {
  n: number;
  meanPredicted: number;
  observed: number;
  expected: number;
}

/**
 * The groups of predicted risk behind the calibration figure (Hosmer and Lemeshow's grouping):
 * per group, the events the model expects beside the events seen, and the gap between them.
 */
export function CalibrationTable({ groups }: { groups: readonly CalibrationGroup[] }) {
  return (
    <TableScroll label="Calibration groups">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          Subjects in {groups.length} groups of equal size by predicted risk, lowest risk first: does the
          model expect as many events as happened in each group?
        </caption>
        <thead>
          <tr>
            <th scope="col">Risk group</th>
            <th scope="col" className="text-right">
              Subjects
            </th>
            <th scope="col" className="text-right">
              Predicted risk (mean)
            </th>
            <th scope="col" className="text-right">
              Events expected
            </th>
            <th scope="col" className="text-right">
              Events seen
            </th>
            <th scope="col" className="text-right">
              Seen − expected
            </th>
          </tr>
        </thead>
        <tbody>
          {groups.map((g, k) => (
            <tr key={k}>
              <th scope="row" className="num">
                {k + 1}
              </th>
              <td className="num text-right">{g.n}</td>
              <td className="num text-right">{fmt(g.meanPredicted)}</td>
              <td className="num text-right">{fmt(g.expected, 1)}</td>
              <td className="num text-right">{g.observed}</td>
              <td className="num text-right">
                {fmt(Math.abs(g.observed - g.expected) < 0.05 ? 0 : g.observed - g.expected, 1)}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

interface Ratio {
  name: string;
  ratio: number;
  lower: number;
  upper: number;
  profileLower: number | null;
  profileUpper: number | null;
}

export function RatioTable({ rows, ratioName }: { rows: readonly Ratio[]; ratioName: string }) {
  return (
    <TableScroll label={`${ratioName[0].toUpperCase()}${ratioName.slice(1)}s`}>
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          {ratioName[0].toUpperCase() + ratioName.slice(1)}s (conditional on the covariates) with Wald and
          profile-likelihood 95% intervals.
        </caption>
        <thead>
          <tr>
            <th scope="col">Coefficient</th>
            <th scope="col" className="text-right">
              {ratioName}
            </th>
            <th scope="col" className="text-right">
              Wald 95% CI
            </th>
            <th scope="col" className="text-right">
              Profile 95% CI
            </th>
          </tr>
        </thead>
        <tbody>
          {rows.map((r) => (
            <tr key={r.name}>
              <th scope="row">{r.name}</th>
              <td className="num text-right">{fmt(r.ratio)}</td>
              <td className="num text-right whitespace-nowrap">{fmtCi(r.lower, r.upper)}</td>
              <td className="num text-right whitespace-nowrap">
                {r.profileLower === null || r.profileUpper === null
                  ? "—"
                  : fmtCi(r.profileLower, r.profileUpper)}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

export interface CheckCardData {
  key: string;
  label: string;
  outcome: "within" | "finding" | "not_computed";
  statistic: string;
  threshold: string;
  summary: string;
  remedy: string;
  flagged: { rank: number; value: number; who: string }[];
  flaggedCount: number;
  /** The statistic's formula where its name alone does not say it (the collinearity check). */
  formula?: { name: string; symbol: string; exponent: string; words: string } | null;
}

/** A check's formula in proper notation, with what it means. */
export function CheckFormulaNote({ formula }: { formula: NonNullable<CheckCardData["formula"]> }) {
  return (
    <p className="text-xs text-ink-soft">
      <span className="font-semibold">{formula.name}</span> = {formula.symbol}
      <sup>{formula.exponent}</sup>: {formula.words}.
    </p>
  );
}

const OUTCOME: Record<CheckCardData["outcome"], StatusWord> = CHECK_OUTCOME;

/** How the planned checks came out, in words: "9 within plan · 2 findings · 0 not computed". */
export function checkTally(checks: readonly { outcome: CheckCardData["outcome"] }[]): string {
  const count = (outcome: CheckCardData["outcome"]) => checks.filter((c) => c.outcome === outcome).length;
  return `${count("within")} within plan · ${count("finding")} findings · ${count("not_computed")} not computed`;
}

/** One planned check: statistic, threshold, outcome in word and shape, and the figure that supports it. */
export function CheckCard({ check, figure }: { check: CheckCardData; figure?: ReactNode }) {
  const o = OUTCOME[check.outcome];
  return (
    <article className="panel" aria-labelledby={`check-${check.key}`}>
      <header className="flex flex-wrap items-baseline justify-between gap-2 border-b border-rule px-4 py-2">
        <h3 id={`check-${check.key}`} className="text-base font-semibold">
          {check.label}
        </h3>
        <StatusLabel status={o.status} word={o.word} />
      </header>
      <div className="grid gap-4 p-4 lg:grid-cols-[minmax(0,18rem)_1fr]">
        <div className="min-w-0 space-y-2 text-sm">
          <dl className="grid grid-cols-[6rem_1fr] gap-x-2 gap-y-1">
            <dt className="font-semibold text-ink-soft">Statistic</dt>
            <dd className="num">{check.statistic}</dd>
            <dt className="font-semibold text-ink-soft">Threshold</dt>
            <dd className="num">{check.threshold}</dd>
          </dl>
          <p>{check.summary}</p>
          {check.formula ? <CheckFormulaNote formula={check.formula} /> : null}
          {check.flagged.length > 0 ? (
            <TableScroll label={`Flagged subjects, ${check.label}`}>
              <table className="data-table">
                <caption className="text-left text-xs text-ink-soft">
                  Most extreme {check.flagged.length} of {check.flaggedCount} flagged
                </caption>
                <thead>
                  <tr>
                    <th scope="col">Rank</th>
                    <th scope="col">Subject</th>
                    <th scope="col" className="text-right">
                      Value
                    </th>
                  </tr>
                </thead>
                <tbody>
                  {check.flagged.map((f) => (
                    <tr key={f.rank}>
                      <td className="num">{f.rank}</td>
                      <td>{f.who}</td>
                      <td className="num text-right">{fmt(f.value)}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </TableScroll>
          ) : null}
          <p className="text-xs text-ink-soft">
            <span className="font-semibold">Planned remedy:</span> {check.remedy}
          </p>
        </div>
        <div className="min-w-0">{figure}</div>
      </div>
    </article>
  );
}

export interface ComparedAnalysis {
  id: string;
  label: string;
  primary: boolean;
  prespecified: boolean;
  status?: string;
  failure?: string | null;
  contrasts: { label: string; estimate: number; lower: number; upper: number; p: number }[];
}

/** The treatment contrast across the primary analysis and its sensitivity analyses. */
export function SensitivityTable({
  analyses,
  hrefOf,
}: {
  analyses: readonly ComparedAnalysis[];
  hrefOf?: (id: string) => string;
}) {
  const name = (a: ComparedAnalysis) => (hrefOf ? <Link to={hrefOf(a.id)}>{a.label}</Link> : a.label);
  const tag = (a: ComparedAnalysis) =>
    a.primary ? " (primary)" : a.prespecified ? " (planned)" : " (not pre-specified)";
  return (
    <TableScroll label="Treatment contrast across analyses">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          The treatment contrast across analyses (HC3 intervals for the robust-errors analysis of a linear
          model, sandwich intervals for a Cox model clustered by subject; hazard ratios and restricted mean
          differences as labelled).
        </caption>
        <thead>
          <tr>
            <th scope="col">Analysis</th>
            <th scope="col">Contrast</th>
            <th scope="col" className="text-right">
              Estimate
            </th>
            <th scope="col" className="text-right">
              95% CI
            </th>
            <th scope="col" className="text-right">
              p
            </th>
          </tr>
        </thead>
        <tbody>
          {analyses.flatMap((a) =>
            a.contrasts.length === 0
              ? [
                  <tr key={a.id}>
                    <td>
                      {name(a)}
                      {tag(a)}
                    </td>
                    <td colSpan={4} className="text-ink-soft">
                      {a.status === "failed"
                        ? `failed: ${a.failure ?? "no reason recorded"}`
                        : (a.status ?? "no result")}
                    </td>
                  </tr>,
                ]
              : a.contrasts.map((c, i) => (
                  <tr key={`${a.id}-${c.label}`}>
                    <td>
                      {i === 0 ? (
                        <>
                          {name(a)}
                          {tag(a)}
                        </>
                      ) : null}
                    </td>
                    <td>{c.label}</td>
                    <td className="num text-right">{fmt(c.estimate)}</td>
                    <td className="num text-right whitespace-nowrap">{fmtCi(c.lower, c.upper)}</td>
                    <td className="num text-right">{fmtP(c.p)}</td>
                  </tr>
                )),
          )}
        </tbody>
      </table>
    </TableScroll>
  );
}
