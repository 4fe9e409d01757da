/**
 * The diagnostic figures of a sponsor report: the same figure modules as the results page and the
 * appendix (app/figures/registry.ts), drawn for a viewer who does not see subjects (influential
 * subjects by rank, never by id) and rendered on the server, as the appendix's pictures are, so the
 * report page needs no figure route of its own. Each figure's SVG text passes the report's
 * redaction check before it becomes a picture (a PNG reads no text, so the check comes first).
 * Kept per result hash: a published result never changes.
 */
import { LRUCache } from "lru-cache";
import { figureData, figureListOf, figureModule, figureSpec } from "~/figures/registry";
import { FigureUnavailableError } from "~/figures/shared/source";
import { specToSvg, svgToPng } from "../appendix/figures.server";
import { loadLockedTable } from "../datasets/catalog.server";
import { analysedWords } from "../appendix/repeated-content";
import type { Redaction } from "../redaction.server";
import type { RerunDocument } from "../reruns/reruns.server";
import { rerunTable } from "../reruns/what-if.server";

export interface ReportFigure {
  key: string;
  caption: string;
  alt: string;
  /** The picture as a PNG data address, or null with the reason it was not drawn. */
  src: string | null;
  /** The picture's size in CSS pixels (the frame keeps it while the image loads: no layout shift). */
  width: number;
  height: number;
  reason: string | null;
}

/** About 24 MB of pictures (string length counts UTF-16 units; close enough for a bound). */
const kept = new LRUCache<string, ReportFigure[]>({
  maxSize: 24 * 1024 * 1024,
  sizeCalculation: (f) =>
    Math.max(
      1,
      f.reduce((n, x) => n + (x.src?.length ?? 0), 0),
    ),
});

/** Lets the server answer other requests between two figures (drawing one takes a moment of the event loop). */
const yieldToOthers = () => new Promise<void>((resolve) => setImmediate(resolve));

export async function reportFigures(
  rerunId: string,
  resultSha256: string | null,
  doc: RerunDocument,
  datasetVersionId: string,
  modelTitle: string,
  redaction: Redaction,
): Promise<ReportFigure[]> {
  const cacheKey = `${rerunId} ${resultSha256 ?? ""}`;
  const hit = kept.get(cacheKey);
  if (hit) return hit;
  const list = figureListOf(doc);
  const table = list.some((w) => figureModule(w.figure).needsTable)
    ? rerunTable(doc, (await loadLockedTable(datasetVersionId)).table)
    : undefined;
  const out: ReportFigure[] = [];
  for (const w of list) {
    await yieldToOthers();
    const m = figureModule(w.figure);
    const caption = `${m.words.caption}${w.term ? ` for ${w.term}` : ""}, ${modelTitle}`;
    const key = `${w.figure}${w.term ? `:${w.term}` : ""}`;
    try {
      const d = figureData(doc, w.figure, { term: w.term, withSubjectIds: false, table });
      const svg = await specToSvg(figureSpec(d, { width: 560, height: 230, forPrint: true }));
      redaction.assertClean(svg, `The ${w.figure} figure of a report`);
      // one pixel per CSS pixel: a report holds a dozen figures, and the page carries them inline
      const picture = svgToPng(svg, 1);
      const alt = `${caption}: ${m.words.shows}, for ${analysedWords(doc.result)}. A healthy picture shows ${m.words.healthy}. ${m.marked(d)}`;
      out.push({
        key,
        caption,
        alt,
        src: `data:image/png;base64,${picture.png.toString("base64")}`,
        width: picture.width,
        height: picture.height,
        reason: null,
      });
    } catch (e) {
      if (!(e instanceof FigureUnavailableError)) throw e;
      out.push({ key, caption, alt: caption, src: null, width: 0, height: 0, reason: e.message });
    }
  }
  kept.set(cacheKey, out);
  return out;
}
