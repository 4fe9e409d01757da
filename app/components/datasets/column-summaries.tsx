import type { ColumnMeta } from "~/shared/datasets";
import { formatCount, formatStat } from "./format";

const TYPE_WORD: Record<ColumnMeta["type"], string> = {
  number: "number",
  text: "text",
  date: "date",
  datetime: "date-time",
};

/** One compact block per column: type, counts, then the range or the levels. */
export function ColumnSummaries({
  columns,
  keyColumns,
}: {
  columns: (ColumnMeta & { looksCategorical?: string })[];
  keyColumns: string[];
}) {
  return (
    <section aria-labelledby="column-summaries" className="panel">
      <h2 id="column-summaries" className="border-b border-rule px-3 py-2 text-base">
        Columns <span className="num font-normal text-ink-soft">({columns.length})</span>
      </h2>
      <ul className="max-h-[34rem] divide-y divide-rule overflow-y-auto text-sm">
        {columns.map((c) => (
          <li key={c.name} className="px-3 py-2">
            <div className="flex items-baseline justify-between gap-2">
              <span className="font-semibold">
                {c.name}
                {keyColumns.includes(c.name) ? (
                  <span className="ml-1.5 text-xs font-medium uppercase tracking-wide text-accent-dark">
                    key
                  </span>
                ) : null}
              </span>
              <span className="text-xs text-ink-soft">{TYPE_WORD[c.type] ?? c.type}</span>
            </div>
            {c.looksCategorical ? (
              <p className="text-xs font-medium text-accent-dark">
                Looks categorical: {c.looksCategorical}. A plan using it as a term must say categorical or
                continuous.
              </p>
            ) : null}
            {c.label ? <p className="text-xs text-ink-soft">{c.label}</p> : null}
            <p className="num text-xs">
              {formatCount(c.nonMissing)} present · {formatCount(c.missing)} missing
            </p>
            {c.type === "number" && c.nonMissing > 0 ? (
              <dl className="num mt-0.5 grid grid-cols-4 gap-x-2 text-xs">
                <div>
                  <dt className="text-ink-soft">min</dt>
                  <dd>{formatStat(c.min)}</dd>
                </div>
                <div>
                  <dt className="text-ink-soft">max</dt>
                  <dd>{formatStat(c.max)}</dd>
                </div>
                <div>
                  <dt className="text-ink-soft">mean</dt>
                  <dd>{formatStat(c.mean)}</dd>
                </div>
                <div>
                  <dt className="text-ink-soft">SD</dt>
                  <dd>{formatStat(c.sd)}</dd>
                </div>
              </dl>
            ) : null}
            {c.earliest ? (
              <p className="num text-xs">
                {c.earliest} to {c.latest}
              </p>
            ) : null}
            {c.levels ? (
              <p className="num mt-0.5 text-xs">
                {c.levels.slice(0, 8).map((l, i) => (
                  <span key={l.value}>
                    {i > 0 ? " · " : ""}
                    {l.value} <span className="text-ink-soft">{formatCount(l.count)}</span>
                  </span>
                ))}
                {c.levels.length > 8 ? (
                  <span className="text-ink-soft"> · {c.levels.length - 8} more levels</span>
                ) : null}
              </p>
            ) : c.type === "text" && c.nonMissing > 0 ? (
              <p className="text-xs text-ink-soft">more than 50 distinct values</p>
            ) : null}
          </li>
        ))}
      </ul>
    </section>
  );
}
