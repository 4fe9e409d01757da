import type { ChangeSummary } from "~/shared/datasets";
import { formatCount } from "./format";

/** What changed against the previous locked version, counted by key. */
export function ChangeSummaryPanel({ changes, version }: { changes: ChangeSummary; version: number }) {
  const rows: [string, number, string[]][] = [
    ["Rows added", changes.rowsAdded, changes.examples.added],
    ["Rows removed", changes.rowsRemoved, changes.examples.removed],
    [
      "Rows changed",
      changes.rowsChanged,
      changes.examples.changed.map((c) => `${c.key} (${c.columns.join(", ")})`),
    ],
    ["Rows unchanged", changes.rowsUnchanged, []],
  ];
  return (
    <section aria-labelledby="changes" className="panel p-4">
      <h2 id="changes" className="mb-1">
        Changes in version {version} against locked version {changes.againstVersion}
      </h2>
      <p className="mb-2 text-xs text-ink-soft">
        {changes.keyColumns.length > 0
          ? `Rows matched by the key ${changes.keyColumns.join(", ")}.`
          : "No shared key: rows matched by position."}
      </p>
      <table className="data-table">
        <tbody>
          {rows.map(([label, n, examples]) => (
            <tr key={label}>
              <th scope="row" className="w-40">
                {label}
              </th>
              <td className="num w-24 text-right">{formatCount(n)}</td>
              <td className="text-xs text-ink-soft">
                {examples.length > 0 ? `e.g. ${examples.join("; ")}` : ""}
              </td>
            </tr>
          ))}
          <tr>
            <th scope="row">Columns added</th>
            <td className="num text-right">{changes.columnsAdded.length}</td>
            <td className="text-xs">{changes.columnsAdded.join(", ")}</td>
          </tr>
          <tr>
            <th scope="row">Columns removed</th>
            <td className="num text-right">{changes.columnsRemoved.length}</td>
            <td className="text-xs">{changes.columnsRemoved.join(", ")}</td>
          </tr>
        </tbody>
      </table>
    </section>
  );
}
