import type { Block } from "~/shared/appendix-content";
import { TableScroll } from "../table-scroll";

/** One block of the appendix's content model as HTML, as the Word file holds it. */
export function PreviewBlock({ b, images }: { b: Block; images: Record<string, string> }) {
  switch (b.kind) {
    case "heading":
      return <h3 className="mt-4 text-base font-semibold">{b.text}</h3>;
    case "paragraph":
      return <p className="max-w-prose [overflow-wrap:anywhere]">{b.text}</p>;
    case "bullets":
      return (
        <ul className="max-w-prose list-disc space-y-1 pl-5">
          {b.items.map((item) => (
            <li key={item}>{item}</li>
          ))}
        </ul>
      );
    case "caution":
      return (
        <p className="border-y-2 border-accent py-2">
          <span className="font-semibold">Caution.</span> {b.text}
        </p>
      );
    case "narrative":
      return (
        <div className="border-l-2 border-accent pl-3" data-narrative={b.section}>
          <p className="text-xs italic text-ink-soft">
            Medical writer's narrative, version {b.version}
            {b.author ? `, ${b.author}` : ""}
          </p>
          {b.paragraphs.map((p, i) => (
            <p key={i} className="max-w-prose">
              {p}
            </p>
          ))}
        </div>
      );
    case "table":
      return (
        <TableScroll label={`Table ${b.number}`}>
          <table className="data-table" data-table-key={b.key}>
            <caption className="mb-1 text-left text-sm">
              <span className="font-semibold">Table {b.number}.</span> {b.caption}
            </caption>
            <thead>
              <tr>
                {b.columns.map((c) => (
                  <th key={c.label} scope="col" className={c.numeric ? "text-right" : ""}>
                    {c.label}
                  </th>
                ))}
              </tr>
            </thead>
            <tbody>
              {b.rows.map((r, i) => (
                <tr key={i}>
                  {r.map((v, j) => (
                    <td
                      key={j}
                      className={
                        b.columns[j]?.numeric
                          ? "num whitespace-nowrap text-right"
                          : b.columns[j]?.prose
                            ? "min-w-64"
                            : ""
                      }
                    >
                      {v}
                    </td>
                  ))}
                </tr>
              ))}
            </tbody>
          </table>
          {b.note ? <p className="mt-1 text-xs text-ink-soft">{b.note}</p> : null}
        </TableScroll>
      );
    case "figure":
      return (
        <figure className="panel max-w-3xl p-3" data-figure-key={b.key}>
          <img src={images[b.key]} alt={b.alt} className="w-full" />
          <figcaption className="mt-2 text-sm">
            <span className="font-semibold">Figure {b.number}.</span> {b.caption}
          </figcaption>
        </figure>
      );
  }
}
