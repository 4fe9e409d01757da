/**
 * The diagnostic figures of a sponsor report: the same figure modules as the results page and the
 * appendix (app/figures/registry.ts), drawn for a viewer who does not see subjects (influential
 * subjects by rank, never by id), rendered to SVG on the server so the report page needs no figure
 * route of its own. Kept per result hash: a published result never changes.
 */
import { LRUCache } from "lru-cache";
import { figureData, figureListOf, figureModule, figureSpec } from "~/figures/registry";
import { FigureUnavailableError } from "~/figures/shared/source";
import { specToSvg } from "../appendix/figures.server";
import { loadLockedTable } from "../datasets/catalog.server";
import type { RerunDocument } from "../reruns/reruns.server";
import { rerunTable } from "../reruns/what-if.server";

export interface ReportFigure {
  key: string;
  caption: string;
  alt: string;
  /**
   * The figure as SVG text, or null with the reason it was not drawn. Sent as text, not encoded,
   * so the report's check for subject ids (assertClean) reads every label in it.
   */
  svg: string | null;
  /** The picture's size in CSS pixels (the frame keeps it while the image loads: no layout shift). */
  width: number;
  height: number;
  reason: string | null;
}

/** About 32 MB of SVG (string length counts UTF-16 units; close enough for a bound). */
const kept = new LRUCache<string, ReportFigure[]>({ maxSize: 32 * 1024 * 1024, sizeCalculation: (f) => Math.max(1, f.reduce((n, x) => n + (x.svg?.length ?? 0), 0)) });

export async function reportFigures(rerunId: string, resultSha256: string | null, doc: RerunDocument, datasetVersionId: string, modelTitle: string): Promise<ReportFigure[]> {
  const cacheKey = `${rerunId} ${resultSha256 ?? ""}`;
  const hit = kept.get(cacheKey);
  if (hit) return hit;
  const list = figureListOf(doc);
  const table = list.some((w) => figureModule(w.figure).needsTable) ? rerunTable(doc, (await loadLockedTable(datasetVersionId)).table) : undefined;
  const out: ReportFigure[] = [];
  for (const w of list) {
    const m = figureModule(w.figure);
    const caption = `${m.words.caption}${w.term ? ` for ${w.term}` : ""}, ${modelTitle}`;
    const key = `${w.figure}${w.term ? `:${w.term}` : ""}`;
    try {
      const d = figureData(doc, w.figure, { term: w.term, withSubjectIds: false, table });
      const svg = await specToSvg(figureSpec(d, { width: 560, height: 230, forPrint: true }));
      const alt = `${caption}: ${m.words.shows}, for ${doc.result.n} subjects. A healthy picture shows ${m.words.healthy}. ${m.marked(d)}`;
      const size = /<svg[^>]*\bwidth="(\d+(?:\.\d+)?)"[^>]*\bheight="(\d+(?:\.\d+)?)"/.exec(svg);
      out.push({ key, caption, alt, svg, width: Number(size?.[1] ?? 560), height: Number(size?.[2] ?? 300), reason: null });
    } catch (e) {
      if (!(e instanceof FigureUnavailableError)) throw e;
      out.push({ key, caption, alt: caption, svg: null, width: 0, height: 0, reason: e.message });
    }
  }
  kept.set(cacheKey, out);
  return out;
}
