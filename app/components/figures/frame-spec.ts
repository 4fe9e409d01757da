/**
 * What the results page and its figure worker share: the figures route's answer, how a figure's
 * specification is made ready for a frame, and the messages between page and worker. Pure.
 */
import type { Spec } from "vega";
import type { FigureData } from "~/figures/registry";
import { rewrapTitle } from "~/figures/shared/look";

/** The figures route's answer: the figure compiled to Vega, reading its rows from the dataset "rows". */
export type FigureAnswer = { caution: string; spec: Spec; data: FigureData };
/** The figures route's refusal (or a failed request), in words for the reader. */
export type FigureRefusal = { caution: string; message: string };

/**
 * Fetches a figure from the figures route, once per address while the answer is kept: a refusal
 * or a failed request is not kept, so the next ask (after the reader fixes the cause) tries again.
 * Never rejects; a failure is a refusal in words.
 */
export function keptAnswer(
  kept: Map<string, Promise<FigureAnswer | FigureRefusal>>,
  url: string,
): Promise<FigureAnswer | FigureRefusal> {
  let pending = kept.get(url);
  if (!pending) {
    pending = fetch(url)
      .then(async (res): Promise<FigureAnswer | FigureRefusal> => {
        const body = (await res.json().catch(() => null)) as FigureAnswer | FigureRefusal | null;
        if (res.ok && body && "spec" in body) return body;
        kept.delete(url);
        return {
          caution: body?.caution ?? "",
          message:
            body && "message" in body
              ? body.message
              : `The figure could not be loaded (HTTP ${res.status}). Reload the page to try again.`,
        };
      })
      .catch(() => {
        kept.delete(url);
        return {
          caution: "",
          message: "The figure could not be loaded. Check the connection and reload the page.",
        };
      });
    kept.set(url, pending);
  }
  return pending;
}

/** Replaces the values of the named dataset of a compiled specification (the rows travel apart from the spec). */
export function withDataset(spec: Spec, name: string, values: readonly object[]): Spec {
  return {
    ...spec,
    data: (spec.data ?? []).map((d) => (d.name === name ? { ...d, values: values as object[] } : d)),
  } as Spec;
}

/** The specification to draw in a frame `width` px wide: the subtitle wrapped again for it, the rows in place. */
export function specForFrame(answer: FigureAnswer, width: number): Spec {
  return withDataset(rewrapTitle(answer.spec, width), "rows", answer.data.rows);
}

/** The figure's name and its healthy-picture sentence, for the frame's accessible name. */
export function figureLabel(spec: Spec): string {
  const title = (spec as { title?: { text?: unknown; subtitle?: unknown } }).title;
  const text = typeof title?.text === "string" ? title.text : "Diagnostic figure";
  const subtitle = Array.isArray(title?.subtitle) ? title.subtitle.join(" ") : "";
  return `${text}. ${subtitle}`.trim();
}

/**
 * One figure drawn once per address, frame size (CSS px) and pixel ratio. The page's early start
 * (figure-worker-start.tsx) writes the same key in its own words: keep the two alike.
 */
export function bitmapKey(url: string, width: number, height: number, scale: number): string {
  return `${url} ${width}x${height}@${scale}`;
}

/** Page to worker: draw the figure at `url` for a frame of this size. */
export interface DrawRequest {
  key: string;
  url: string;
  width: number;
  height: number;
  scale: number;
}

/** Page to worker: fetch the figure at `url` now, its frame's size comes later. */
export interface PrefetchRequest {
  prefetch: string;
}

/** Worker to page: the picture and the frame's accessible name, or why there is none. */
export type DrawAnswer =
  | { key: string; bitmap: ImageBitmap; width: number; height: number; label: string }
  /** `refused`: the figures route answered with a reason for the reader; otherwise the drawing failed. */
  | { key: string; error: string; refused: boolean };

/** The frames' markers in the page (rerun-figure.tsx), read before the page hydrates. */
export const FRAME_URL_ATTRIBUTE = "data-figure-url";
export const TARGET_ATTRIBUTE = "data-figure-target";
