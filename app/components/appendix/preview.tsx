import type { AppendixContent, NarrativeSection } from "~/shared/appendix-content";
import { TableScroll } from "../table-scroll";
import { NarrativeEditor, type NarrativeResult } from "./narrative-editor";
import { PreviewBlock } from "./preview-block";

/** The appendix as the Word file holds it, with a narrative editor under each section for those who may write it. */
export function Preview({
  content,
  images,
  narratives,
  canNarrate,
  result,
  busy,
}: {
  content: AppendixContent;
  images: Record<string, string>;
  narratives: Record<NarrativeSection, { body: string; versions: number }>;
  canNarrate: boolean;
  result: NarrativeResult | undefined;
  busy: boolean;
}) {
  const tp = content.titlePage;
  return (
    <article className="space-y-8" aria-label="Preview of the appendix">
      <section className="panel space-y-3 p-5">
        <p className="text-xs font-semibold uppercase tracking-wide text-accent">{tp.studyCode}</p>
        <h2 className="text-xl">{content.title}</h2>
        <p className="text-sm text-ink-soft">{tp.studyTitle}</p>
        <TableScroll label="Facts of the appendix">
          <table className="data-table">
            <tbody>
              {tp.facts.map((f) => (
                <tr key={`${f.label}${f.value}`}>
                  <th scope="row" className="whitespace-nowrap text-left">
                    {f.label}
                  </th>
                  <td className="break-all">{f.value}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </TableScroll>
      </section>
      {content.sections.map((s) => (
        <section key={s.key} className="space-y-3 text-sm" data-section={s.key}>
          <h2>{s.title}</h2>
          {s.blocks.map((b, i) => (
            <PreviewBlock key={i} b={b} images={images} />
          ))}
          {canNarrate && s.key !== "caution" ? (
            <NarrativeEditor
              section={s.key}
              planVersionId={content.planVersionId}
              body={narratives[s.key].body}
              versions={narratives[s.key].versions}
              result={result}
              busy={busy}
            />
          ) : null}
        </section>
      ))}
    </article>
  );
}
