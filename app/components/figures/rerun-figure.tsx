import { useEffect, useRef, useState } from "react";
import type { TopLevelSpec } from "vega-lite";
import type { FigureKey } from "~/engine/checks";
import { CANVAS_FROM, rewrapTitle, type FigureData } from "./specs";

/** The frame's height: fixed, so the page does not move when the chart arrives. */
export const FIGURE_FRAME_HEIGHT = 440;

type FigureAnswer = { caution: string; spec: TopLevelSpec; data: FigureData } | { caution: string; message: string };

type State = { kind: "loading" } | { kind: "ready" } | { kind: "error"; message: string };

/** Where the results page fetches a figure from. */
export function figureUrl(studyId: string, rerunId: string, figure: FigureKey, term?: string): string {
  const base = `/studies/${encodeURIComponent(studyId)}/reruns/${encodeURIComponent(rerunId)}/figures/${figure}`;
  return term ? `${base}?term=${encodeURIComponent(term)}` : base;
}

/**
 * One diagnostic figure of a rerun, drawn in the browser from data fetched from the figures
 * resource route, so the page paints before the charts. vega-embed is imported lazily, on the
 * client only, when the frame comes near the viewport; expressions run through Vega's
 * interpreter (no eval, so the page's CSP holds). From DENSE_FROM subjects the server sends a
 * density and the few subjects worth naming instead of every point; from CANVAS_FROM drawn points
 * the canvas renderer keeps hover responsive.
 */
export function RerunFigure({ studyId, rerunId, figure, term }: { studyId: string; rerunId: string; figure: FigureKey; term?: string }) {
  const frame = useRef<HTMLDivElement>(null);
  const target = useRef<HTMLDivElement>(null);
  const [state, setState] = useState<State>({ kind: "loading" });
  const [near, setNear] = useState(false);

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
    if (!near) return;
    const abort = new AbortController();
    let finalize: (() => void) | undefined;
    setState({ kind: "loading" });
    (async () => {
      const res = await fetch(figureUrl(studyId, rerunId, figure, term), { signal: abort.signal, headers: { Accept: "application/json" } });
      const body = (await res.json().catch(() => null)) as FigureAnswer | null;
      if (!res.ok || !body || !("spec" in body)) {
        const message = body && "message" in body ? body.message : `The figure could not be loaded (HTTP ${res.status}). Reload the page to try again.`;
        setState({ kind: "error", message });
        return;
      }
      const { default: embed } = await import("vega-embed");
      if (abort.signal.aborted || !target.current) return;
      // the server wrapped the subtitle for a typical width; wrap it again for this frame
      const spec = { ...rewrapTitle(body.spec, target.current.clientWidth), datasets: { rows: body.data.rows } } as TopLevelSpec;
      const result = await embed(target.current, spec, {
        actions: false,
        ast: true,
        renderer: body.data.rows.length >= CANVAS_FROM ? "canvas" : "svg",
        tooltip: { theme: "light" },
      });
      if (abort.signal.aborted) result.finalize();
      else {
        finalize = result.finalize;
        setState({ kind: "ready" });
      }
    })().catch((e: unknown) => {
      if (abort.signal.aborted) return;
      setState({ kind: "error", message: e instanceof Error ? `The figure could not be drawn: ${e.message}` : "The figure could not be drawn." });
    });
    return () => {
      abort.abort();
      finalize?.();
    };
  }, [near, studyId, rerunId, figure, term]);

  return (
    <div ref={frame} className="panel relative w-full overflow-hidden p-3" style={{ height: FIGURE_FRAME_HEIGHT }} data-figure={figure} data-term={term} data-state={state.kind}>
      <div ref={target} className="h-full w-full" />
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
