import { fmt, fmtP } from "~/shared/format";
import { FitStatisticsTable } from "../fit-statistics-table";
import { populationNote } from "../population-note";
import type { RepeatedView } from "./repeated-view";
import { TableScroll } from "../table-scroll";

/** The fit statistics of a repeated-measures rerun as labelled rows (the shared two-column table). */
export function repeatedFitRows(view: RepeatedView): { label: string; value: string }[] {
  const c = view.covariance;
  const t = view.structureTest;
  return [
    { label: "Covariance structure planned", value: c.planned },
    {
      label: "Covariance structure used",
      value: c.asPlanned
        ? `${c.used}, as planned`
        : `${c.used}, a fallback of the plan (see the attempts below)`,
    },
    {
      label: "Fit",
      value: c.converged
        ? `converged in ${c.iterations} iteration${c.iterations === 1 ? "" : "s"}`
        : `stopped after ${c.iterations} iterations without converging`,
    },
    { label: `${view.likelihood} log-likelihood`, value: fmt(c.logLik, 2) },
    { label: "Akaike information criterion", value: fmt(c.aic, 1) },
    { label: "Bayesian information criterion", value: fmt(c.bic, 1) },
    { label: "Parameters (coefficients and covariance)", value: String(c.parameterCount) },
    {
      label: "Structure used against unstructured",
      value: !t
        ? "the structure used is unstructured"
        : t.statistic === null || t.p === null
          ? `no test: ${t.reason ?? "not computed"}`
          : `likelihood-ratio χ² = ${fmt(t.statistic, 2)} on ${t.df} df, p ${pWords(t.p)}${view.likelihood === "REML" ? " (REML likelihoods, same fixed effects)" : ""}`,
    },
    { label: "Degrees of freedom", value: view.dfMethod },
  ];
}

function pWords(p: number): string {
  const s = fmtP(p);
  return s.startsWith("<") ? `< ${s.slice(1)}` : `= ${s}`;
}

/** Records and subjects used, why rows were left out, the fit and the covariance structure's attempts. */
export function RepeatedFitSection({ view }: { view: RepeatedView }) {
  const c = view.covariance;
  return (
    <section aria-labelledby="rows-h">
      <h2 id="rows-h" className="mb-2">
        Records and fit
      </h2>
      <p className="num text-sm">
        {view.rows.inFile} rows in the file · {view.rows.outsidePopulation} outside the population
        {populationNote(view.population)} · {view.rows.excludedByOption} excluded by this analysis ·{" "}
        {view.rows.missingCells} left out for missing cells ·{" "}
        <span className="font-semibold">
          {view.n} records of {view.subjects} subjects used
        </span>{" "}
        · {c.visits.length} visits ({view.visitColumn}) · subjects by {view.subjectColumn}
      </p>
      <p className="mt-1 text-xs text-ink-soft">{view.method}</p>
      <div className="mt-3">
        <FitStatisticsTable rows={repeatedFitRows(view)} />
      </div>
      {c.attempts.length > 1 || !c.asPlanned ? (
        <div className="mt-3">
          <TableScroll label="Covariance structures tried">
            <table className="data-table">
              <caption className="mb-1 text-left text-xs text-ink-soft">
                Covariance structures tried, in the plan&apos;s order: the planned one first, then its
                fallbacks until one converged.
              </caption>
              <thead>
                <tr>
                  <th scope="col">Structure</th>
                  <th scope="col">Outcome</th>
                  <th scope="col" className="text-right">
                    Iterations
                  </th>
                  <th scope="col">Why not used</th>
                </tr>
              </thead>
              <tbody>
                {c.attempts.map((a) => (
                  <tr key={a.structure}>
                    <th scope="row" className="text-left font-normal">
                      {a.structure}
                    </th>
                    <td>{a.used ? "used" : a.converged ? "converged, not used" : "not used"}</td>
                    <td className="num text-right">{a.iterations}</td>
                    <td>{a.reason ?? "—"}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </TableScroll>
        </div>
      ) : null}
    </section>
  );
}
