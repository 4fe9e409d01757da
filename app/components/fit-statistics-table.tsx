import type { FitStatisticRow } from "./fit-statistics";
import { TableScroll } from "./table-scroll";

/** The fit statistics of a rerun as a small two-column table (rows from fit-statistics.ts). */
export function FitStatisticsTable({ rows }: { rows: readonly FitStatisticRow[] }) {
  return (
    <TableScroll label="Fit statistics">
      <table className="data-table max-w-3xl">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          How well the model fits, with the degrees of freedom behind each quantity.
        </caption>
        <tbody>
          {rows.map((r) => (
            <tr key={r.label}>
              <th scope="row" className="text-left font-normal text-ink-soft">
                {r.label}
              </th>
              <td className="num">{r.value}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}
