import { contrastWords, forestPoints, type ForestRow } from "~/figures/forest";
import { TableScroll } from "../table-scroll";
import { VegaChart, type VegaSpecJson } from "./vega-chart";

export type { ForestRow } from "~/figures/forest";

const fmt = (v: number) => (Number.isFinite(v) ? v.toFixed(2) : "—");

/**
 * The treatment contrast with its 95% CI across analyses, primary first: a forest-style chart
 * across the panel's full width (forestSpec in app/figures/forest.ts, compiled to Vega by the loader, drawn in the browser) above a compact table with the same numbers, so the
 * robustness of the conclusion is visible at a glance. Analyses the plan did not name say
 * "not pre-specified" in words on the chart and in the table.
 */
export function SensitivityForest({
  rows,
  contrastLabel,
  spec,
}: {
  rows: ForestRow[];
  contrastLabel: string;
  spec: VegaSpecJson;
}) {
  const points = forestPoints(rows);
  if (rows.length === 0)
    return <p className="text-sm text-ink-soft">No completed analyses to compare yet.</p>;
  const words = contrastWords(contrastLabel);
  // the plot's own height (forestSpec) plus title, subtitle, axis and legend, so the frame does not shift when it draws
  const lines = Math.max(1, ...points.map((p) => p.axisLabel.split("\n").length));
  const height = 170 + Math.max(60, points.length * (14 + 13 * lines));
  return (
    <div className="space-y-3" data-contrast={contrastLabel}>
      <div className="panel w-full p-3">
        <VegaChart
          spec={spec}
          height={height}
          label={`Treatment contrast ${contrastLabel} with 95% confidence intervals across ${points.length} analyses`}
        />
      </div>
      <TableScroll
        label={`${contrastLabel}: ${words.ratio ? "ratio" : "estimate"} and 95% CI`}
        className="self-start"
      >
        <table className="data-table">
          <caption className="mb-1 text-left text-xs text-ink-soft">
            {contrastLabel}: {words.ratio ? "ratio" : "estimate"} and 95% CI
          </caption>
          <thead>
            <tr>
              <th scope="col">Analysis</th>
              <th scope="col" className="text-right">
                {words.ratio ? "Ratio" : "Estimate"} (95% CI)
              </th>
            </tr>
          </thead>
          <tbody>
            {points.map((p) => (
              <tr key={p.axisLabel}>
                <td>
                  <span className={p.primary ? "font-semibold" : ""}>{p.label}</span>
                  <span className="block text-xs text-ink-soft">
                    {p.primary
                      ? "Primary analysis"
                      : p.prespecified
                        ? "Pre-specified sensitivity"
                        : "Not pre-specified"}
                  </span>
                </td>
                <td className="num whitespace-nowrap text-right">
                  {fmt(p.estimate)} ({fmt(p.lower)} to {fmt(p.upper)})
                </td>
              </tr>
            ))}
          </tbody>
        </table>
      </TableScroll>
    </div>
  );
}
