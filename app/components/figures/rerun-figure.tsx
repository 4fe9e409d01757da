import { useEffect, useRef, useState, type PointerEvent as ReactPointerEvent } from "react";
import type { FigureKey } from "~/engine/checks";
import { drawChart, loadChartLibrary } from "./draw-chart";
import { fetchAnswer, FigureRefused, figureBitmap, showBitmap, whenAllDrawn } from "./figure-bitmaps";
import { figureLabel, FRAME_URL_ATTRIBUTE, specForFrame, TARGET_ATTRIBUTE } from "./frame-spec";

/** The frame's height: fixed, so the page does not move when the chart arrives. */
export const FIGURE_FRAME_HEIGHT = 440;

type State = { kind: "loading" } | { kind: "ready"; label: string } | { kind: "error"; message: string };
type Size = { width: number; height: number };

/** Where the results page fetches a figure from. */
export function figureUrl(studyId: string, rerunId: string, figure: FigureKey, term?: string): string {
  const base = `/studies/${encodeURIComponent(studyId)}/reruns/${encodeURIComponent(rerunId)}/figures/${figure}`;
  return term ? `${base}?term=${encodeURIComponent(term)}` : base;
}

/** Lets the pointer's last position reach a view drawn under it, so its hover details show without another move. */
function replayPointer(container: HTMLElement, at: { x: number; y: number } | null): void {
  const canvas = container.querySelector("canvas");
  if (!canvas || !at) return;
  // Vega shows hover details on pointermove (vega-scenegraph's TooltipShowEvent)
  canvas.dispatchEvent(new PointerEvent("pointermove", { clientX: at.x, clientY: at.y, bubbles: true }));
}

/**
 * One diagnostic figure of a rerun, drawn from data fetched from the figures resource route, so
 * the page paints before the charts. From DENSE_FROM subjects the server sends a density and the
 * subjects worth naming instead of every point.
 *
 * The figure is first drawn in a worker and shown as a picture (figure-bitmaps.ts); the results
 * page starts that worker from its HTML (FigureWorkerStart). When the pointer comes to the
 * figure, a live Vega view with hover details is drawn in its place, with the same pixels.
 * Without a worker the live view is drawn at once. Figures draw on canvas: measured
 * with `npm run bench:figures`, thirteen SVG figures spent about a fifth more main-thread time in
 * the browser's own layout and painting. A canvas has no marks for assistive technology, so the
 * frame carries the figure's title and healthy-picture sentence as its accessible name; the
 * check card beside it states the numbers in words.
 */
export function RerunFigure({
  studyId,
  rerunId,
  figure,
  term,
}: {
  studyId: string;
  rerunId: string;
  figure: FigureKey;
  term?: string;
}) {
  const url = figureUrl(studyId, rerunId, figure, term);
  const target = useRef<HTMLDivElement>(null);
  const pointer = useRef<{ x: number; y: number } | null>(null);
  const [state, setState] = useState<State>({ kind: "loading" });
  const [size, setSize] = useState<Size | null>(null);
  const [live, setLive] = useState(false);

  // the frame's size now and after the window is resized (a live view follows the window itself)
  useEffect(() => {
    const el = target.current;
    if (!el) return;
    const measure = () =>
      setSize((s) =>
        s && s.width === el.clientWidth && s.height === el.clientHeight
          ? s
          : { width: el.clientWidth, height: el.clientHeight },
      );
    measure();
    if (typeof ResizeObserver === "undefined") return;
    let timer: ReturnType<typeof setTimeout> | undefined;
    const observer = new ResizeObserver(() => {
      clearTimeout(timer);
      timer = setTimeout(measure, 150);
    });
    observer.observe(el);
    return () => {
      observer.disconnect();
      clearTimeout(timer);
    };
  }, []);

  // the picture, drawn in the worker at the frame's size
  useEffect(() => {
    const el = target.current;
    if (live || !size || !el || size.width === 0) return;
    let cancelled = false;
    figureBitmap(url, size.width, size.height).then(
      (drawn) => {
        if (cancelled) return;
        showBitmap(el, drawn);
        setState({ kind: "ready", label: drawn.label });
        // the live view's code, ready for the first hover (its data is fetched when the pointer comes)
        whenAllDrawn(() => void loadChartLibrary().catch(() => undefined));
      },
      (e: unknown) => {
        if (cancelled) return;
        if (e instanceof FigureRefused) setState({ kind: "error", message: e.message });
        else setLive(true); // no worker here, or it failed: draw on the page
      },
    );
    return () => {
      cancelled = true;
    };
  }, [url, size, live]);

  // the live view, when the pointer comes (or when there is no worker)
  useEffect(() => {
    const el = target.current;
    if (!live || !el) return;
    let cancelled = false;
    let finalize: (() => void) | undefined;
    void (async () => {
      const answer = await fetchAnswer(url);
      if (cancelled) return;
      if (!("spec" in answer)) return setState({ kind: "error", message: answer.message });
      const spec = specForFrame(answer, el.clientWidth);
      // drawn beside the picture, which goes once the view has drawn the same pixels over it
      const host = document.createElement("div");
      host.className = "absolute inset-0";
      el.append(host);
      const remove = await drawChart(host, spec, "canvas");
      if (cancelled) return remove();
      finalize = remove;
      for (const child of [...el.children]) if (child !== host) child.remove();
      setState({ kind: "ready", label: figureLabel(spec) });
      replayPointer(host, pointer.current);
    })().catch((e: unknown) => {
      if (!cancelled)
        setState({
          kind: "error",
          message:
            e instanceof Error
              ? `The figure could not be drawn: ${e.message}`
              : "The figure could not be drawn.",
        });
    });
    return () => {
      cancelled = true;
      finalize?.();
    };
  }, [url, live]);

  // where the pointer is, for the live view to show hover details there at once
  const pointerCame = (e: ReactPointerEvent) => {
    pointer.current = { x: e.clientX, y: e.clientY };
    if (state.kind === "ready") setLive(true);
  };
  const frameAttributes = { [FRAME_URL_ATTRIBUTE]: url };
  return (
    <div
      className="panel relative w-full overflow-hidden p-3"
      style={{ height: FIGURE_FRAME_HEIGHT }}
      data-figure={figure}
      data-term={term}
      data-state={state.kind}
      {...frameAttributes}
      onPointerEnter={pointerCame}
      onPointerMove={pointerCame}
    >
      <div
        className="h-full w-full"
        role="img"
        aria-label={state.kind === "ready" ? state.label : "Diagnostic figure, loading"}
      >
        <div ref={target} className="relative h-full w-full" {...{ [TARGET_ATTRIBUTE]: "" }} />
      </div>
      {state.kind === "loading" ? (
        <p className="absolute inset-0 flex items-center justify-center text-xs text-ink-soft" role="status">
          Drawing the figure…
        </p>
      ) : null}
      {state.kind === "error" ? (
        <p
          className="absolute inset-0 flex items-center justify-center px-6 text-center text-sm text-ink-soft"
          role="alert"
        >
          {state.message}
        </p>
      ) : null}
    </div>
  );
}
