import { FitStatisticsTable } from "../fit-statistics-table";
import { populationNote } from "../population-note";
import type { ModelResultsView } from "./results-view";

/** How many rows the fit used and why the others were left out, and the fit statistics. */
export function RowsAndFit({ view }: { view: ModelResultsView }) {
  return (
    <section aria-labelledby="rows-h">
      <h2 id="rows-h" className="mb-2">
        Rows and fit
      </h2>
      <p className="num text-sm">
        {view.rows.inFile} rows in the file · {view.rows.outsidePopulation} outside the population
        {populationNote(view.population)} · {view.rows.excludedByOption} excluded by this analysis ·{" "}
        {view.rows.missingCells} left out for missing cells ·{" "}
        <span className="font-semibold">{view.rows.used} used</span> · {view.rank} coefficients estimated
      </p>
      <div className="mt-3 overflow-x-auto">
        <FitStatisticsTable rows={view.fitStatistics} />
      </div>
      {view.kind === "glm" && view.notes.length > 0 ? (
        <ul className="mt-2 list-disc pl-5 text-sm">
          {view.notes.map((n) => (
            <li key={n}>{n}</li>
          ))}
        </ul>
      ) : null}
    </section>
  );
}
