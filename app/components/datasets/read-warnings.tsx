import type { ColumnMeta } from "~/shared/datasets";
import type { ColumnReadMeta } from "~/engine-io/dataset/table";

/**
 * What the reader noticed while reading the file (e.g. a column of numbers with a few text
 * cells, read as text), with the columns read by their values on the data manager's choice.
 */
export function ReadWarnings({ columns }: { columns: (ColumnMeta & Partial<ColumnReadMeta>)[] }) {
  const warnings = columns.flatMap((c) => c.warnings ?? []);
  const byValues = columns.filter((c) => c.readByValues).map((c) => c.name);
  const decimalComma = columns.filter((c) => c.decimalComma).map((c) => c.name);
  if (warnings.length === 0 && byValues.length === 0 && decimalComma.length === 0) return null;
  return (
    <section aria-labelledby="read-warnings" className="panel px-3 py-2 text-sm">
      <h2 id="read-warnings" className="mb-1 text-base">
        Reading notes
      </h2>
      <ul className="list-disc space-y-0.5 pl-5">
        {warnings.map((w) => (
          <li key={w}>{w}</li>
        ))}
        {byValues.length > 0 ? (
          <li>
            Read by their values rather than their declared type, as the data manager chose:{" "}
            {byValues.join(", ")}.
          </li>
        ) : null}
        {decimalComma.length > 0 ? (
          <li>Decimal commas read as decimal points: {decimalComma.join(", ")}.</li>
        ) : null}
      </ul>
    </section>
  );
}
