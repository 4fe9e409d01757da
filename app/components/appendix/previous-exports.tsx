import { utc } from "~/shared/format";
import { TableScroll } from "../table-scroll";

/** The appendix exports kept for the study, each with its hash and file. */
export function PreviousExports({
  exports,
  downloadHref,
}: {
  exports: readonly {
    id: string;
    sha256: string;
    byteSize: number;
    exportedAt: string;
    by: string | null;
    reruns: number;
  }[];
  downloadHref: (id: string) => string;
}) {
  return (
    <section aria-labelledby="exports-heading">
      <h2 id="exports-heading">Previous exports</h2>
      {exports.length === 0 ? (
        <p className="text-sm text-ink-soft">No export yet.</p>
      ) : (
        <TableScroll label="Previous exports">
          <table className="data-table panel">
            <thead>
              <tr>
                <th scope="col">Exported</th>
                <th scope="col">By</th>
                <th scope="col" className="text-right">
                  Reruns
                </th>
                <th scope="col">SHA-256</th>
                <th scope="col">File</th>
              </tr>
            </thead>
            <tbody>
              {exports.map((e) => (
                <tr key={e.id}>
                  <td className="whitespace-nowrap">{utc(e.exportedAt)}</td>
                  <td>{e.by ?? "—"}</td>
                  <td className="num text-right">{e.reruns}</td>
                  <td className="num break-all text-xs">{e.sha256}</td>
                  <td className="whitespace-nowrap">
                    <a href={downloadHref(e.id)} download>
                      Download ({Math.round(e.byteSize / 1024)} KB)
                    </a>
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </TableScroll>
      )}
    </section>
  );
}
