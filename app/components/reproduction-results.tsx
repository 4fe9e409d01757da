/**
 * The reproduction check on the results page and the report: each published value beside the
 * rerun's value, rounded as printed, with its outcome in word and shape.
 */
import { fmt } from "~/shared/format";
import { StatusLabel } from "./status";

export interface ReproductionCardData {
  outcome: "reproduced" | "not_reproduced";
  rule: string;
  label: string;
  statistic: string;
  values: {
    quantity: string;
    printed: string;
    decimals: number;
    rerunValue: number | null;
    rerunRounded: string | null;
    outcome: "reproduced" | "not_reproduced";
    reason: string;
  }[];
}

const WORD = { reproduced: "Reproduced", not_reproduced: "Not reproduced" } as const;
const STATUS = { reproduced: "within", not_reproduced: "finding" } as const;

/** Printed numbers with a true minus sign, as the results tables print them. */
const minus = (text: string) => text.replace(/(^|[\s(<>])-(?=\.?\d)/g, "$1−");

/** The rerun's value with enough digits to see why it rounds as it does. */
const unrounded = (x: number | null, decimals: number) =>
  x === null ? "—" : fmt(x, Math.min(Math.max(decimals + 3, 4), 12));

export function ReproductionCard({ check }: { check: ReproductionCardData }) {
  return (
    <article className="panel" aria-labelledby="check-reproduction">
      <header className="flex flex-wrap items-baseline justify-between gap-2 border-b border-rule px-4 py-2">
        <h3 id="check-reproduction" className="text-base font-semibold">
          {check.label}
        </h3>
        <StatusLabel status={STATUS[check.outcome]} word={WORD[check.outcome]} />
      </header>
      <div className="space-y-2 p-4 text-sm">
        <p className="num">{check.statistic}.</p>
        <p className="text-xs text-ink-soft">{check.rule}</p>
        <div className="overflow-x-auto">
          <table className="data-table">
            <caption className="mb-1 text-left text-xs text-ink-soft">
              Each value the study report printed, against the rerun's value rounded to the same decimals.
            </caption>
            <thead>
              <tr>
                <th scope="col">Quantity</th>
                <th scope="col" className="text-right">
                  Printed
                </th>
                <th scope="col" className="text-right">
                  Decimals
                </th>
                <th scope="col" className="text-right">
                  Rerun value
                </th>
                <th scope="col" className="text-right">
                  Rerun, rounded
                </th>
                <th scope="col">Outcome</th>
              </tr>
            </thead>
            <tbody>
              {check.values.map((v, i) => (
                <tr key={i}>
                  <th scope="row" className="text-left font-normal">
                    {v.quantity}
                  </th>
                  <td className="num text-right">{minus(v.printed)}</td>
                  <td className="num text-right">{v.decimals}</td>
                  <td className="num text-right">{unrounded(v.rerunValue, v.decimals)}</td>
                  <td className="num text-right">{v.rerunRounded === null ? "—" : minus(v.rerunRounded)}</td>
                  <td>
                    <StatusLabel status={STATUS[v.outcome]} word={WORD[v.outcome]} />
                    <span className="block text-xs text-ink-soft">{minus(v.reason)}</span>
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      </div>
    </article>
  );
}
