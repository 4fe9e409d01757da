/**
 * Draws the results page's diagnostic figures off the page's main thread: a dedicated worker
 * fetches each figure from the figures route, runs Vega headless on an OffscreenCanvas and
 * answers an ImageBitmap, which the page shows (figure-bitmaps.ts).
 *
 * Why: measured with `npm run bench:figures`, a results page of thirteen figures spent about
 * 0.5 s of main-thread time running Vega's dataflow and painting, after the page's own
 * hydration, so all figures of a 10 000-subject rerun took 1.4–1.7 s. Here the drawing runs on
 * another core while the page hydrates; the page starts this worker while its HTML is still
 * being read (figure-worker-start.tsx). The page makes a live Vega view (hover details) only when
 * the pointer comes to a figure (rerun-figure.tsx), and that view draws the same pixels: same
 * specification, size, fonts and pixel ratio.
 *
 * Vega has no worker mode of its own: it makes its canvases, including the one it measures text
 * with, through document.createElement, so the worker gives it a document that makes
 * OffscreenCanvases. That must be in place before Vega's modules evaluate, hence the dynamic
 * imports.
 */
import type { Spec } from "vega";
import regular from "@fontsource/noto-sans/files/noto-sans-latin-400-normal.woff2?url";
import semibold from "@fontsource/noto-sans/files/noto-sans-latin-600-normal.woff2?url";
import bold from "@fontsource/noto-sans/files/noto-sans-latin-700-normal.woff2?url";
import {
  figureLabel,
  keptAnswer,
  specForFrame,
  type DrawAnswer,
  type DrawRequest,
  type FigureAnswer,
  type FigureRefusal,
  type PrefetchRequest,
} from "./frame-spec";

interface WorkerScope {
  document?: unknown;
  fonts?: FontFaceSet;
  postMessage(message: DrawAnswer, transfer?: Transferable[]): void;
  onmessage: ((event: MessageEvent<DrawRequest | PrefetchRequest>) => void) | null;
}
const scope = globalThis as unknown as WorkerScope;

scope.document ??= { createElement: (tag: string) => (tag === "canvas" ? new OffscreenCanvas(1, 1) : null) };

/** The faces the figures draw in (specs.ts: text 400, titles 600, Vega's axis titles bold). */
async function loadFonts(): Promise<void> {
  const faces = [
    new FontFace("Noto Sans", `url(${regular})`, { weight: "400" }),
    new FontFace("Noto Sans", `url(${semibold})`, { weight: "600" }),
    new FontFace("Noto Sans", `url(${bold})`, { weight: "700" }),
  ];
  await Promise.all(
    faces.map(async (face) => {
      scope.fonts?.add(await face.load());
    }),
  );
}

// Vega's module (half a MB) is evaluated on this thread: started a turn later, after the page's
// first messages, so the figure data is already being fetched while it evaluates
const library = new Promise<void>((resolve) => setTimeout(resolve, 0))
  .then(() => Promise.all([import("./vega-drawing"), import("vega-interpreter"), loadFonts()]))
  .then((loaded) => {
    // read by `npm run bench:figures` (the worker's timeline)
    performance.mark("figures:library");
    return loaded;
  });

/** Each figure address is fetched once (two frames may show one figure at different sizes). */
const answers = new Map<string, Promise<FigureAnswer | FigureRefusal>>();

/** The figure addresses written in the worker's address after "#", as a JSON list; none when absent or unreadable. */
function addressesOf(hash: string): string[] {
  try {
    const list: unknown = JSON.parse(decodeURIComponent(hash.slice(1)) || "[]");
    return Array.isArray(list)
      ? list.filter((u): u is string => typeof u === "string" && /^\/(?!\/)/.test(u))
      : [];
  } catch {
    return [];
  }
}

/** The figure at a fixed size: the page's figures take the size of their frame (Vega's containerSize), which a worker has not got. */
function sized(spec: Spec, width: number, height: number): Spec {
  const fixed: Record<string, number> = { width, height };
  return {
    ...spec,
    signals: (spec.signals ?? []).map((s) => (s.name in fixed ? { name: s.name, value: fixed[s.name] } : s)),
  } as Spec;
}

async function draw(req: DrawRequest): Promise<void> {
  const answer = await keptAnswer(answers, req.url);
  if (!("spec" in answer)) return scope.postMessage({ key: req.key, error: answer.message, refused: true });
  const spec = specForFrame(answer, req.width);
  const [vega, { expressionInterpreter }] = await library;
  const start = performance.now();
  const view = new vega.View(vega.parse(sized(spec, req.width, req.height), undefined, { ast: true }), {
    renderer: "none",
    expr: expressionInterpreter as never,
  });
  try {
    const canvas = (await view.toCanvas(req.scale)) as unknown as OffscreenCanvas;
    const bitmap = canvas.transferToImageBitmap();
    scope.postMessage(
      {
        key: req.key,
        bitmap,
        width: bitmap.width / req.scale,
        height: bitmap.height / req.scale,
        label: figureLabel(spec),
      },
      [bitmap],
    );
    performance.measure(`figures:draw ${req.key}`, { start });
  } finally {
    view.finalize();
  }
}

/** Addresses whose answer has come (an answer or a refusal). */
const arrived = new Set<string>();

/** The figure's answer, fetched once; `arrived` names it once it has come. */
function answerOf(url: string): Promise<FigureAnswer | FigureRefusal> {
  const pending = keptAnswer(answers, url);
  void pending.then(() => arrived.add(url));
  return pending;
}

/** Frames asked for and not yet drawn, in the order the page asked (page order). */
const queue: DrawRequest[] = [];
let drawing = false;

/**
 * One figure at a time, in page order among those whose data has come: the data of all of them
 * is asked for at once, and a figure whose answer is slower does not hold up the ones already
 * here (measured with `npm run bench:figures`: Vega was often loaded 0.1 s before the first
 * figure's answer came, while others had).
 */
async function drawQueued(): Promise<void> {
  if (drawing) return;
  drawing = true;
  try {
    while (queue.length > 0) {
      await library.catch(() => undefined); // draw() reports a library that failed to load
      const next = queue.findIndex((r) => arrived.has(r.url));
      if (next < 0) {
        await Promise.race(queue.map((r) => answerOf(r.url)));
        continue;
      }
      const [req] = queue.splice(next, 1);
      await draw(req).catch((e: unknown) =>
        scope.postMessage({
          key: req.key,
          error: e instanceof Error ? e.message : String(e),
          refused: false,
        }),
      );
    }
  } finally {
    drawing = false;
  }
}

// the figure addresses the page's early start put in this worker's address (figure-worker-start.tsx)
for (const url of addressesOf(location.hash)) void answerOf(url);
scope.onmessage = ({ data }) => {
  if ("prefetch" in data) return void answerOf(data.prefetch);
  void answerOf(data.url);
  queue.push(data);
  void drawQueued();
};
