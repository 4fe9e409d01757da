/**
 * The Cox section of a results page: rows used, log hazard ratios, hazard ratios with their
 * intervals, the model's tests, the proportional-hazards test per term and global, the plan's
 * checks with their figures, and the survival and residual figures.
 */
import { populationNote, type PopulationStepView } from "./population-note";
import { TableScroll } from "./table-scroll";
import type { FigureKey } from "~/engine/checks";
import { RerunFigure } from "./figures/rerun-figure";
import { fmt, fmtCi, fmtP } from "~/shared/format";
import { CheckCard, checkTally, CoefficientTable, type CheckCardData } from "./rerun-results";

interface RestrictedMeanRow {
  tau: number;
  level: string;
  reference: string;
  arm: { mean: number; se: number };
  referenceArm: { mean: number; se: number };
  difference: number;
  lower: number;
  upper: number;
  p: number;
}

export interface CoxView {
  kind: "cox";
  method: string;
  n: number;
  rows: {
    inFile: number;
    outsidePopulation: number;
    excludedByOption: number;
    missingCells: number;
    used: number;
  };
  population: PopulationStepView[];
  treatment: string | null;
  strata: readonly string[];
  robust: boolean;
  coefficients: {
    name: string;
    term: string;
    estimate: number;
    se: number;
    statistic: number;
    p: number;
    lower: number;
    upper: number;
  }[];
  ratios: readonly {
    name: string;
    ratio: number;
    lower: number;
    upper: number;
  }[];
  fit: {
    logLik: number;
    logLikNull: number;
    events: number;
    eventsPerCoefficient: number;
    concordance: number;
    iterations: number;
    converged: boolean;
  };
  tests: { name: string; statistic: number; df: number; p: number }[];
  proportionalHazards: {
    transform: string;
    rows: { term: string; statistic: number; df: number; p: number }[];
  };
  notes: readonly string[];
  /** The restricted-mean analysis only: each arm against the reference to τ. */
  restrictedMean: readonly RestrictedMeanRow[] | null;
  figures: { figure: FigureKey; term?: string }[];
  checks: (CheckCardData & { figure: FigureKey | null })[];
}

/** The figure a Cox check is shown with: the first treatment coefficient's Schoenfeld plot for the PH check, the first covariate's martingale plot. */
export function coxCheckFigure(
  view: CoxView,
  figure: FigureKey,
): { figure: FigureKey; term?: string } | null {
  const first = view.figures.find((f) => f.figure === figure);
  if (figure === "schoenfeld") {
    const treatment = view.coefficients.find((c) => view.treatment !== null && c.term === view.treatment);
    return first ? { figure, term: treatment?.name ?? first.term } : null;
  }
  return first ?? null;
}

/** The figure addresses of a Cox results page, in page order. */
export function coxPageFigures(view: CoxView): { figure: FigureKey; term?: string }[] {
  return [
    ...view.checks.flatMap((c) => (c.figure ? (coxCheckFigure(view, c.figure) ?? []) : [])),
    ...view.figures,
  ];
}

export function ChiSquareTable({
  caption,
  rows,
  first,
}: {
  caption: string;
  rows: { name: string; statistic: number; df: number; p: number }[];
  first: string;
}) {
  return (
    <TableScroll label={caption}>
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">{caption}</caption>
        <thead>
          <tr>
            <th scope="col">{first}</th>
            <th scope="col" className="text-right">
              Statistic (χ²)
            </th>
            <th scope="col" className="text-right">
              Degrees of freedom
            </th>
            <th scope="col" className="text-right">
              p
            </th>
          </tr>
        </thead>
        <tbody>
          {rows.map((t) => (
            <tr key={t.name}>
              <th scope="row" className="text-left font-normal">
                {t.name}
              </th>
              <td className="num text-right">{fmt(t.statistic, 2)}</td>
              <td className="num text-right">{t.df}</td>
              <td className="num text-right">{fmtP(t.p)}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

/** The restricted mean survival time analysis: each arm's area under its Kaplan–Meier curve to τ and the difference. */
function RestrictedMeanSection({ rows }: { rows: NonNullable<CoxView["restrictedMean"]> }) {
  return (
    <section className="panel p-4" aria-labelledby="rmst-h">
      <h2 id="rmst-h" className="mb-2">
        Restricted mean survival time
      </h2>
      <TableScroll label="Restricted mean survival time by arm">
        <table className="data-table">
          <caption className="mb-1 text-left text-xs text-ink-soft">
            Area under each arm&apos;s Kaplan–Meier curve up to τ (time units of the data), with its
            Greenwood-type SE; the difference with a Wald 95% interval. Above 0 means longer event-free time
            than the reference.
          </caption>
          <thead>
            <tr>
              <th scope="col">Comparison</th>
              <th scope="col" className="text-right">
                τ
              </th>
              <th scope="col" className="text-right">
                Arm (SE)
              </th>
              <th scope="col" className="text-right">
                Reference (SE)
              </th>
              <th scope="col" className="text-right">
                Difference
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
            {rows.map((d) => (
              <tr key={d.level}>
                <th scope="row" className="text-left font-normal">
                  {d.level} vs {d.reference}
                </th>
                <td className="num text-right">{fmt(d.tau)}</td>
                <td className="num text-right whitespace-nowrap">
                  {fmt(d.arm.mean)} ({fmt(d.arm.se)})
                </td>
                <td className="num text-right whitespace-nowrap">
                  {fmt(d.referenceArm.mean)} ({fmt(d.referenceArm.se)})
                </td>
                <td className="num text-right">{fmt(d.difference)}</td>
                <td className="num text-right whitespace-nowrap">{fmtCi(d.lower, d.upper)}</td>
                <td className="num text-right">{fmtP(d.p)}</td>
              </tr>
            ))}
          </tbody>
        </table>
      </TableScroll>
    </section>
  );
}

export function HazardRatioTable({ ratios, robust }: { ratios: CoxView["ratios"]; robust: boolean }) {
  return (
    <TableScroll label="Hazard ratio table">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          Hazard ratio exp(β) with its 95% {robust ? "robust (sandwich) " : ""}Wald interval; below 1 means
          fewer events than the reference.
        </caption>
        <thead>
          <tr>
            <th scope="col">Coefficient</th>
            <th scope="col" className="text-right">
              Hazard ratio
            </th>
            <th scope="col" className="text-right">
              95% CI
            </th>
          </tr>
        </thead>
        <tbody>
          {ratios.map((r) => (
            <tr key={r.name}>
              <th scope="row" className="text-left font-normal">
                {r.name}
              </th>
              <td className="num text-right">{fmt(r.ratio)}</td>
              <td className="num text-right whitespace-nowrap">{fmtCi(r.lower, r.upper)}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

/** The model's tests and the proportional-hazards test per term and global, side by side. */
function CoxTestTables({
  tests,
  proportionalHazards,
}: {
  tests: CoxView["tests"];
  proportionalHazards: CoxView["proportionalHazards"];
}) {
  return (
    <div className="grid gap-4 lg:grid-cols-2">
      <ChiSquareTable caption="Tests of the model against no covariate effect." rows={tests} first="Test" />
      <ChiSquareTable
        caption={`Test of proportional hazards per term and global (Grambsch and Therneau 1994; time scale: ${proportionalHazards.transform}).`}
        rows={proportionalHazards.rows.map((r) => ({ ...r, name: r.term }))}
        first="Term"
      />
    </div>
  );
}

/** Hazard ratios and the tests of a Cox rerun, for readers of a published report. */
export function CoxReportTables({
  cox,
  robust,
}: {
  cox: {
    ratios: CoxView["ratios"];
    tests: CoxView["tests"];
    proportionalHazards: CoxView["proportionalHazards"];
  };
  robust: boolean;
}) {
  return (
    <div className="space-y-4">
      <HazardRatioTable ratios={cox.ratios} robust={robust} />
      <CoxTestTables tests={cox.tests} proportionalHazards={cox.proportionalHazards} />
    </div>
  );
}

export function CoxResults({ view, studyId, rerunId }: { view: CoxView; studyId: string; rerunId: string }) {
  const figure = (f: { figure: FigureKey; term?: string }) => (
    <RerunFigure
      key={`${f.figure}:${f.term ?? ""}`}
      studyId={studyId}
      rerunId={rerunId}
      figure={f.figure}
      term={f.term}
    />
  );
  return (
    <>
      <section aria-labelledby="rows-h">
        <h2 id="rows-h" className="mb-2">
          Rows
        </h2>
        <p className="num text-sm">
          {view.rows.inFile} rows in the file · {view.rows.outsidePopulation} outside the population
          {populationNote(view.population)} · {view.rows.excludedByOption} excluded by this analysis ·{" "}
          {view.rows.missingCells} left out for missing cells ·{" "}
          <span className="font-semibold">{view.rows.used} used</span> · {view.fit.events} events ·{" "}
          {fmt(view.fit.eventsPerCoefficient, 1)} events per coefficient · concordance{" "}
          {fmt(view.fit.concordance)}
          {view.strata.length ? ` · ${view.strata.length} strata` : ""}
        </p>
        <p className="mt-1 text-xs text-ink-soft">{view.method}</p>
        {view.notes.length > 0 ? (
          <ul className="mt-2 list-disc pl-5 text-sm">
            {view.notes.map((n) => (
              <li key={n}>{n}</li>
            ))}
          </ul>
        ) : null}
      </section>

      {view.restrictedMean ? <RestrictedMeanSection rows={view.restrictedMean} /> : null}

      <section className="panel p-4" aria-labelledby="hr-h">
        <h2 id="hr-h" className="mb-2">
          Hazard ratios
        </h2>
        <HazardRatioTable ratios={view.ratios} robust={view.robust} />
      </section>

      <section className="panel p-4" aria-labelledby="coef-h">
        <h2 id="coef-h" className="mb-2">
          Coefficients (log hazard ratios)
        </h2>
        <CoefficientTable
          rows={view.coefficients}
          covarianceType={view.robust ? "robust (sandwich)" : "model"}
          df={0}
          statisticName="z"
          scale="the scale of the log hazard ratio"
        />
        <div className="mt-4">
          <CoxTestTables tests={view.tests} proportionalHazards={view.proportionalHazards} />
        </div>
      </section>

      <section aria-labelledby="checks-h" className="space-y-3">
        <h2 id="checks-h">Checks of the plan</h2>
        <p className="text-sm text-ink-soft">{checkTally(view.checks)}</p>
        {view.checks.map((c) => {
          const f = c.figure ? coxCheckFigure(view, c.figure) : null;
          return <CheckCard key={c.key} check={c} figure={f ? figure(f) : undefined} />;
        })}
      </section>

      <section className="panel p-4" aria-labelledby="cox-figures-h">
        <h2 id="cox-figures-h" className="mb-2">
          Survival by arm and the model's residuals
        </h2>
        <p className="mb-2 text-xs text-ink-soft">
          Kaplan–Meier curves and log(−log S) by arm; scaled Schoenfeld residuals per coefficient; martingale
          residuals per continuous covariate; influence on the treatment effect.
        </p>
        <div className="grid gap-4 lg:grid-cols-2">{view.figures.map(figure)}</div>
      </section>
    </>
  );
}
