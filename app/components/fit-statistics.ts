/**
 * The fit statistics of a linear or generalized linear rerun as labelled rows, shared by the
 * results page, the sponsor report and the appendix so that each says the same thing in the same
 * words. Our own small table: each quantity named in words, with its degrees of freedom beside it.
 */
import { familyWithLink } from "~/engine/family-names";
import type { GlmResult } from "~/engine/glm/glm-model";
import type { LinearModelResult } from "~/engine/linear-model";
import { fmt, fmtP } from "~/shared/format";

export interface FitStatisticRow {
  readonly label: string;
  readonly value: string;
}

export interface LinearFitFacts {
  readonly kind: "linear";
  readonly weighted: boolean;
  readonly sigma: number;
  readonly dfResidual: number;
  readonly rSquared: number;
  readonly adjRSquared: number;
  readonly fStatistic: number | null;
  readonly fDf1: number;
  readonly fDf2: number;
  readonly fP: number | null;
  readonly logLikelihood: number;
  readonly aic: number;
}

export interface GlmFitFacts {
  readonly kind: "glm";
  readonly family: string;
  readonly link: string;
  readonly deviance: number;
  readonly dfResidual: number;
  readonly nullDeviance: number;
  readonly dfNull: number;
  readonly logLik: number | null;
  readonly aic: number | null;
  readonly dispersion: number;
  readonly theta?: number;
  readonly thetaSE?: number;
  readonly iterations: number;
  readonly converged: boolean;
  /** Binomial: subjects with the event; counts: the total count. */
  readonly events: number;
  readonly n: number;
}

const dfWords = (df: number, residual = false): string =>
  `(${df} ${residual ? "residual " : ""}degree${df === 1 ? "" : "s"} of freedom)`;

/** The rows of the fit statistics table, in reading order. */
export function fitStatisticRows(f: LinearFitFacts | GlmFitFacts): FitStatisticRow[] {
  if (f.kind === "linear") {
    return [
      {
        label: "Distribution and link",
        value: `${familyWithLink("gaussian", "identity")}, ${f.weighted ? "weighted" : "ordinary"} least squares`,
      },
      { label: "Residual standard deviation", value: `${fmt(f.sigma)} ${dfWords(f.dfResidual, true)}` },
      {
        label: "Share of variance explained, R²",
        value: `${fmt(f.rSquared)}; adjusted for the number of terms ${fmt(f.adjRSquared)}`,
      },
      {
        label: "All terms together against the intercept alone",
        value:
          f.fStatistic === null
            ? "not computed"
            : `F(${f.fDf1}, ${f.fDf2}) = ${fmt(f.fStatistic, 2)}, p ${pWords(f.fP)}`,
      },
      { label: "Log-likelihood", value: fmt(f.logLikelihood, 2) },
      { label: "Akaike information criterion", value: fmt(f.aic, 1) },
    ];
  }
  const estimated = f.family === "quasipoisson";
  const rows: FitStatisticRow[] = [
    {
      label: "Distribution and link",
      value: `${familyWithLink(f.family, f.link)}, ${estimated ? "quasi-likelihood" : "maximum likelihood"}`,
    },
    { label: "Deviance of the model", value: `${fmt(f.deviance, 2)} ${dfWords(f.dfResidual, true)}` },
    {
      label: "Deviance of the intercept-only model",
      value: `${fmt(f.nullDeviance, 2)} ${dfWords(f.dfNull, true)}`,
    },
    {
      label: "Share of the deviance explained",
      value: f.nullDeviance > 0 ? `${fmt(100 * (1 - f.deviance / f.nullDeviance), 1)}%` : "—",
    },
    {
      label: "Log-likelihood",
      value: f.logLik === null ? "not defined for a quasi-likelihood" : fmt(f.logLik, 2),
    },
    {
      label: "Akaike information criterion",
      value: f.aic === null ? "not defined for a quasi-likelihood" : fmt(f.aic, 1),
    },
    {
      label: "Dispersion",
      value: estimated
        ? `${fmt(f.dispersion)}, estimated (Pearson χ² over residual degrees of freedom)`
        : `${fmt(f.dispersion)}, fixed by the family`,
    },
  ];
  if (f.theta !== undefined)
    rows.push({
      label: "Shape θ of the negative binomial",
      value: `${fmt(f.theta)}${f.thetaSE !== undefined ? ` (SE ${fmt(f.thetaSE)})` : ""}, estimated by maximum likelihood`,
    });
  rows.push(
    f.family === "binomial"
      ? { label: "Subjects with and without the event", value: `${f.events} with, ${f.n - f.events} without` }
      : { label: "Total count", value: `${fmt(f.events, 0)} over ${f.n} subjects` },
  );
  rows.push({
    label: "Iteratively reweighted least squares",
    value: f.converged
      ? `converged in ${f.iterations} iterations`
      : `stopped at its limit of ${f.iterations} iterations before converging`,
  });
  return rows;
}

/** The facts the table reads from a stored linear or generalized linear result. */
export function fitFactsOf(
  r: Omit<LinearModelResult, "observations"> | Omit<GlmResult, "observations">,
): LinearFitFacts | GlmFitFacts {
  if (r.kind === "linear") {
    const f = r.fit;
    return {
      kind: "linear",
      weighted:
        Boolean(r.spec.weights) || r.method.kind === "weighted" || r.method.kind === "estimated-variance",
      sigma: f.sigma,
      dfResidual: r.dfResidual,
      rSquared: f.rSquared,
      adjRSquared: f.adjRSquared,
      fStatistic: f.fStatistic,
      fDf1: f.fDf1,
      fDf2: f.fDf2,
      fP: f.fP,
      logLikelihood: f.logLikelihood,
      aic: f.aic,
    };
  }
  const f = r.fit;
  return {
    kind: "glm",
    family: r.family,
    link: r.link,
    deviance: f.deviance,
    dfResidual: f.dfResidual,
    nullDeviance: f.nullDeviance,
    dfNull: f.dfNull,
    logLik: f.logLik,
    aic: f.aic,
    dispersion: f.dispersion,
    ...(f.theta !== undefined ? { theta: f.theta, thetaSE: f.thetaSE } : {}),
    iterations: f.iterations,
    converged: f.converged,
    events: r.events,
    n: r.n,
  };
}

function pWords(p: number | null): string {
  const t = fmtP(p);
  return t.startsWith("<") ? `< ${t.slice(1)}` : `= ${t}`;
}
