import { fmt } from "~/shared/format";
import type { RepeatedView } from "./repeated-view";
import { TableScroll } from "../table-scroll";

/** One visit-by-visit matrix, rows and columns labelled by visit. */
function VisitMatrix({
  label,
  caption,
  visits,
  matrix,
  digits,
}: {
  label: string;
  caption: string;
  visits: readonly string[];
  matrix: readonly (readonly number[])[];
  digits: number;
}) {
  return (
    <TableScroll label={label}>
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">{caption}</caption>
        <thead>
          <tr>
            <td />
            {visits.map((v) => (
              <th key={v} scope="col" className="text-right whitespace-nowrap">
                {v}
              </th>
            ))}
          </tr>
        </thead>
        <tbody>
          {visits.map((v, a) => (
            <tr key={v}>
              <th scope="row" className="text-left font-normal whitespace-nowrap">
                {v}
              </th>
              {visits.map((w, b) => (
                <td key={w} className={`num text-right ${a === b ? "font-semibold" : ""}`}>
                  {fmt(matrix[a]?.[b], digits)}
                </td>
              ))}
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

/** The estimated covariance of the visits within a subject and its correlations. */
export function RepeatedCovarianceSection({ view }: { view: RepeatedView }) {
  const c = view.covariance;
  return (
    <section className="panel p-4" aria-labelledby="cov-h">
      <h2 id="cov-h" className="mb-2">
        Covariance of the visits within a subject
      </h2>
      <div className="grid gap-4 xl:grid-cols-2">
        <VisitMatrix
          label="Estimated covariance of the visits"
          caption={`Estimated covariance (${c.used}), in squared units of ${view.response}; variances on the diagonal.`}
          visits={c.visits}
          matrix={c.matrix}
          digits={2}
        />
        <VisitMatrix
          label="Estimated correlation of the visits"
          caption="The same as correlations between a subject's visits."
          visits={c.visits}
          matrix={c.correlation}
          digits={3}
        />
      </div>
    </section>
  );
}
