import { fmt, fmtCi } from "~/shared/format";
import type { RepeatedView } from "./repeated-view";
import { TableScroll } from "../table-scroll";

/** Adjusted means by visit and arm with their df and intervals, and the subjects with a record at each visit. */
export function RepeatedMeansSection({ view }: { view: RepeatedView }) {
  if (view.visitMeans.length === 0 && view.counts.length === 0) return null;
  const arms = view.arms.length ? view.arms : ["All subjects"];
  return (
    <section className="panel p-4" aria-labelledby="means-h">
      <h2 id="means-h" className="mb-2">
        Adjusted means and subjects by visit
      </h2>
      {view.visitMeans.length > 0 ? (
        <TableScroll label="Adjusted means by visit and arm">
          <table className="data-table">
            <caption className="mb-1 text-left text-xs text-ink-soft">
              Adjusted means of {view.response} at each visit by arm: continuous covariates at their mean over
              the records used, other factors weighted{" "}
              {view.meansWeighting === "proportional"
                ? "by observed proportions"
                : "equally over their levels"}
              ; 95% confidence intervals on {view.dfMethod} degrees of freedom.
            </caption>
            <thead>
              <tr>
                <th scope="col">Visit</th>
                <th scope="col">{view.treatment ?? "Arm"}</th>
                <th scope="col" className="text-right">
                  Adjusted mean
                </th>
                <th scope="col" className="text-right">
                  SE
                </th>
                <th scope="col" className="text-right">
                  df
                </th>
                <th scope="col" className="text-right">
                  95% CI
                </th>
              </tr>
            </thead>
            <tbody>
              {view.visitMeans.map((m) => (
                <tr key={`${m.visit}|${m.level}`}>
                  <td className="whitespace-nowrap">{m.visit}</td>
                  <th scope="row" className="text-left font-normal whitespace-nowrap">
                    {m.level}
                  </th>
                  <td className="num text-right">{fmt(m.estimate)}</td>
                  <td className="num text-right">{fmt(m.se)}</td>
                  <td className="num text-right">{fmt(m.df, 1)}</td>
                  <td className="num text-right whitespace-nowrap">{fmtCi(m.lower, m.upper)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </TableScroll>
      ) : null}
      <div className="mt-4">
        <TableScroll label="Subjects with a record by visit and arm">
          <table className="data-table">
            <caption className="mb-1 text-left text-xs text-ink-soft">
              Subjects with a record used at each visit, by arm (of {view.subjects} subjects analysed).
            </caption>
            <thead>
              <tr>
                <th scope="col">Visit</th>
                {arms.map((a) => (
                  <th key={a} scope="col" className="text-right">
                    {a}
                  </th>
                ))}
              </tr>
            </thead>
            <tbody>
              {view.counts.map((c) => (
                <tr key={c.visit}>
                  <th scope="row" className="text-left font-normal whitespace-nowrap">
                    {c.visit}
                    {c.visit === view.primaryVisit ? (
                      <span className="text-xs font-semibold text-accent"> · primary</span>
                    ) : null}
                  </th>
                  {c.byArm.map((n, k) => (
                    <td key={arms[k]} className="num text-right">
                      {n}
                    </td>
                  ))}
                </tr>
              ))}
            </tbody>
          </table>
        </TableScroll>
      </div>
    </section>
  );
}
