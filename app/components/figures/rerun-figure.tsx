import { useEffect, useRef, useState } from "react";
import { preload } from "react-dom";
import type { Spec } from "vega";
import type { FigureKey } from "~/engine/checks";
import { drawChart, loadChartLibrary, withDataset } from "./draw-chart";
import { rewrapTitle, type FigureData } from "./specs";

/** The frame's height: fixed, so the page does not move when the chart arrives. */
export const FIGURE_FRAME_HEIGHT = 440;

/** The figures route's answer: the figure compiled to Vega, reading its rows from the dataset "rows". */
type FigureAnswer = { caution: string; spec: Spec; data: FigureData } | { caution: string; message: string };

type State = { kind: "loading" } | { kind: "ready"; label: string } | { kind: "error"; message: string };

/** Where the results page fetches a figure from. */
export function figureUrl(studyId: string, rerunId: string, figure: FigureKey, term?: string): string {
  const base = `/studies/${encodeURIComponent(studyId)}/reruns/${encodeURIComponent(rerunId)}/figures/${figure}`;
  return term ? `${base}?term=${encodeURIComponent(term)}` : base;
}

/**
 * One request per figure address for the page's lifetime: several checks show the same figure
 * (Cook's distance, DFBETAS and DFFITS all show influence by subject), and the first request
 * reuses the preload the server's HTML started.
 */
const answers = new Map<string, Promise<FigureAnswer | { caution: string; message: string }>>();

function fetchAnswer(url: string): Promise<FigureAnswer | { caution: string; message: string }> {
  let pending = answers.get(url);
  if (!pending) {
    pending = fetch(url)
      .then(async (res) => {
        const body = (await res.json().catch(() => null)) as FigureAnswer | null;
        if (res.ok && body && "spec" in body) return body;
        // a refusal is not kept: the next mount (after the reader fixes the cause) asks again
        answers.delete(url);
        return { caution: body?.caution ?? "", message: body && "message" in body ? body.message : `The figure could not be loaded (HTTP ${res.status}). Reload the page to try again.` };
      })
      .catch(() => {
        answers.delete(url);
        return { caution: "", message: "The figure could not be loaded. Check the connection and reload the page." };
      });
    answers.set(url, pending);
  }
  return pending;
}

/** The figure's name and its healthy-picture sentence, for the frame's accessible name. */
function labelOf(spec: Spec): string {
  const title = (spec as { title?: { text?: unknown; subtitle?: unknown } }).title;
  const text = typeof title?.text === "string" ? title.text : "Diagnostic figure";
  const subtitle = Array.isArray(title?.subtitle) ? title.subtitle.join(" ") : "";
  return `${text}. ${subtitle}`.trim();
}

/**
 * One diagnostic figure of a rerun, drawn in the browser from data fetched from the figures
 * resource route, so the page paints before the charts. The server's HTML already asks the
 * browser to preload the figure's data (React's preload), and the charting code starts loading
 * when the figure mounts (draw-chart.ts); the figure is drawn when its frame comes near the
 * viewport. From DENSE_FROM subjects the server sends a density and the subjects worth naming
 * instead of every point.
 *
 * Figures draw on canvas: measured with `npm run bench:figures`, thirteen SVG figures spent
 * about a fifth more main-thread time in the browser's own layout and painting. A canvas has no
 * marks for assistive technology, so the frame carries the figure's title and healthy-picture
 * sentence as its accessible name; the check card beside it states the numbers in words.
 */
export function RerunFigure({ studyId, rerunId, figure, term }: { studyId: string; rerunId: string; figure: FigureKey; term?: string }) {
  const url = figureUrl(studyId, rerunId, figure, term);
  // a hint in the server's HTML: the data is on its way while the page's scripts load
  preload(url, { as: "fetch", crossOrigin: "anonymous" });
  const frame = useRef<HTMLDivElement>(null);
  const target = useRef<HTMLDivElement>(null);
  const [state, setState] = useState<State>({ kind: "loading" });
  const [near, setNear] = useState(false);
  const [answer, setAnswer] = useState<FigureAnswer | null>(null);

  // the data and the charting code, fetched at once
  useEffect(() => {
    void loadChartLibrary().catch(() => undefined); // a failure shows when the figure is drawn
    let cancelled = false;
    setAnswer(null);
    setState({ kind: "loading" });
    void fetchAnswer(url).then((body) => {
      if (cancelled) return;
      if ("spec" in body) setAnswer(body);
      else setState({ kind: "error", message: body.message });
    });
    return () => {
      cancelled = true;
    };
  }, [url]);

  // draw when the frame comes near the viewport: a results page with many figures stays responsive
  useEffect(() => {
    const el = frame.current;
    if (!el || typeof IntersectionObserver === "undefined") {
      setNear(true);
      return;
    }
    const io = new IntersectionObserver((entries) => {
      if (entries.some((e) => e.isIntersecting)) {
        setNear(true);
        io.disconnect();
      }
    }, { rootMargin: "400px 0px" });
    io.observe(el);
    return () => io.disconnect();
  }, []);

  useEffect(() => {
    if (!near || !answer || !("spec" in answer) || !target.current) return;
    let cancelled = false;
    let finalize: (() => void) | undefined;
    // the server wrapped the subtitle for a typical width; wrap it again for this frame
    const spec = withDataset(rewrapTitle(answer.spec, target.current.clientWidth), "rows", answer.data.rows);
    (async () => {
      // a canvas does not redraw when a font arrives: wait for the page's fonts first
      await document.fonts?.ready;
      if (cancelled || !target.current) return;
      const remove = await drawChart(target.current, spec, "canvas");
      if (cancelled) remove();
      else {
        finalize = remove;
        setState({ kind: "ready", label: labelOf(spec) });
      }
    })().catch((e: unknown) => {
      if (!cancelled) setState({ kind: "error", message: e instanceof Error ? `The figure could not be drawn: ${e.message}` : "The figure could not be drawn." });
    });
    return () => {
      cancelled = true;
      finalize?.();
    };
  }, [near, answer]);

  return (
    <div ref={frame} className="panel relative w-full overflow-hidden p-3" style={{ height: FIGURE_FRAME_HEIGHT }} data-figure={figure} data-term={term} data-state={state.kind}>
      <div className="h-full w-full" role="img" aria-label={state.kind === "ready" ? state.label : "Diagnostic figure, loading"}>
        <div ref={target} className="h-full w-full" />
      </div>
      {state.kind === "loading" ? (
        <p className="absolute inset-0 flex items-center justify-center text-xs text-ink-soft" role="status">
          Drawing the figure…
        </p>
      ) : null}
      {state.kind === "error" ? (
        <p className="absolute inset-0 flex items-center justify-center px-6 text-center text-sm text-ink-soft" role="alert">
          {state.message}
        </p>
      ) : null}
    </div>
  );
}
