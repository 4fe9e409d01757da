import { fmt, fmtCi, fmtP } from "~/shared/format";
import type { RepeatedView } from "./repeated-view";
import { TableScroll } from "../table-scroll";

/** The coefficients of a repeated-measures rerun, each with its own degrees of freedom. */
export function RepeatedCoefficientsSection({ view }: { view: RepeatedView }) {
  return (
    <section className="panel p-4" aria-labelledby="coef-h">
      <h2 id="coef-h" className="mb-2">
        Coefficients
      </h2>
      <TableScroll label="Coefficients">
        <table className="data-table">
          <caption className="mb-1 text-left text-xs text-ink-soft">
            Estimates with {view.coefficientCovarianceType} standard errors; t on each coefficient&apos;s{" "}
            {view.dfMethod} degrees of freedom; 95% confidence intervals.
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
                df
              </th>
              <th scope="col" className="text-right">
                t
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
            {view.coefficients.map((c) => (
              <tr key={c.name}>
                <th scope="row" className="text-left font-normal">
                  {c.name}
                </th>
                <td className="num text-right">{fmt(c.estimate)}</td>
                <td className="num text-right">{fmt(c.se)}</td>
                <td className="num text-right">{fmt(c.df, 1)}</td>
                <td className="num text-right">{fmt(c.statistic, 2)}</td>
                <td className="num text-right">{fmtP(c.p)}</td>
                <td className="num text-right whitespace-nowrap">{fmtCi(c.lower, c.upper)}</td>
              </tr>
            ))}
          </tbody>
        </table>
      </TableScroll>
    </section>
  );
}
