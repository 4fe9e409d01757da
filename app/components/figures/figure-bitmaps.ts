/**
 * The results page's figures as pictures drawn in a worker (figure-worker.ts), once per figure
 * address and frame size, so that drawing does not hold up the page's main thread. Several
 * checks can show the same figure (the leverage and deletion-residual checks both show leverage
 * against deletion residual); it is drawn once and copied into each frame.
 *
 * The worker is usually started by the page's HTML (figure-worker-start.tsx) and taken over
 * here; on a page reached without a server render, the first figure starts it. Where the browser
 * has no OffscreenCanvas or module workers, or the worker fails, figureBitmap rejects with a
 * DrawingUnavailable error and the figure is drawn on the page as a live Vega view instead
 * (rerun-figure.tsx).
 */
import workerUrl from "./figure-worker.ts?worker&url";
import {
  bitmapKey,
  keptAnswer,
  type DrawAnswer,
  type DrawRequest,
  type FigureAnswer,
  type FigureRefusal,
} from "./frame-spec";

/** One request per figure address for the page's lifetime, for the live views (the worker fetches its own). */
const answers = new Map<string, Promise<FigureAnswer | FigureRefusal>>();

export const fetchAnswer = (url: string): Promise<FigureAnswer | FigureRefusal> => keptAnswer(answers, url);

export interface FigureBitmap {
  bitmap: ImageBitmap;
  /** In CSS px. */
  width: number;
  height: number;
  /** The figure's title and healthy-picture sentence. */
  label: string;
}

/** The figures route refused the figure; `message` says why, for the reader. */
export class FigureRefused extends Error {}
/** The picture could not be drawn off the page; the page draws a live view instead. */
export class DrawingUnavailable extends Error {}

type Waiter = { resolve(b: FigureBitmap): void; reject(e: Error): void };
const waiting = new Map<string, Waiter>();
/** Pictures by key (frame-spec.ts bitmapKey); the oldest are let go beyond KEEP. */
const bitmaps = new Map<string, Promise<FigureBitmap>>();
const KEEP = 32;

let allDrawn: (() => void)[] = [];

function settle(answer: DrawAnswer): void {
  const w = waiting.get(answer.key);
  waiting.delete(answer.key);
  if (w) {
    if ("error" in answer)
      w.reject(answer.refused ? new FigureRefused(answer.error) : new DrawingUnavailable(answer.error));
    else
      w.resolve({ bitmap: answer.bitmap, width: answer.width, height: answer.height, label: answer.label });
  }
  if (waiting.size === 0) for (const fn of allDrawn.splice(0)) fn();
}

/**
 * Runs `fn` when the worker has no figure left to draw, in the browser's idle time: for work
 * that can wait (loading the live view's code), so that it does not compete with the drawing.
 */
export function whenAllDrawn(fn: () => void): void {
  const idle = () => (window.requestIdleCallback ?? ((f: () => void) => setTimeout(f, 200)))(fn);
  if (waiting.size === 0) idle();
  else allDrawn.push(idle);
}

function expect(key: string): Promise<FigureBitmap> {
  const pending = new Promise<FigureBitmap>((resolve, reject) => waiting.set(key, { resolve, reject }));
  pending.catch(() => bitmaps.delete(key));
  bitmaps.set(key, pending);
  for (const [old, drawn] of bitmaps) {
    if (bitmaps.size <= KEEP) break;
    bitmaps.delete(old);
    void drawn.then((b) => b.bitmap.close()).catch(() => undefined);
  }
  return pending;
}

let worker: Worker | null | undefined;

/** The worker the page's HTML started, taken over, or a new one; null where there can be none. */
function drawingWorker(): Worker | null {
  if (worker !== undefined) return worker;
  worker = null;
  const early = window.plumblineFigures;
  window.plumblineFigures = undefined;
  if (early && !early.failed) {
    worker = early.worker;
    for (const key of early.sent) void expect(key).catch(() => undefined);
    for (const answer of early.answers) settle(answer);
  } else {
    if (
      typeof Worker === "undefined" ||
      typeof OffscreenCanvas === "undefined" ||
      typeof FontFace === "undefined"
    )
      return null;
    try {
      worker = new Worker(workerUrl, { type: "module", name: "figures" });
    } catch {
      return null;
    }
  }
  worker.onmessage = ({ data }: MessageEvent<DrawAnswer>) => settle(data);
  worker.onerror = () => {
    // the worker could not start, or stopped: every figure still waiting is drawn on the page
    for (const w of waiting.values()) w.reject(new DrawingUnavailable("The figure worker stopped."));
    waiting.clear();
    worker?.terminate();
    worker = null; // later figures are drawn on the page too
  };
  return worker;
}

/** The figure at `url` drawn `width` × `height` CSS px for this screen, once per address and size. */
export function figureBitmap(url: string, width: number, height: number): Promise<FigureBitmap> {
  const scale = window.devicePixelRatio || 1;
  const key = bitmapKey(url, width, height, scale);
  const w = drawingWorker();
  const kept = bitmaps.get(key);
  if (kept) return kept;
  if (!w) return Promise.reject(new DrawingUnavailable("This browser cannot draw figures off the page."));
  const pending = expect(key);
  const request: DrawRequest = { key, url, width, height, scale };
  w.postMessage(request);
  return pending;
}

/** Paints a picture into `container` as a canvas of the size Vega's own canvas would have. */
export function showBitmap(container: HTMLElement, drawn: FigureBitmap): void {
  const canvas = document.createElement("canvas");
  canvas.className = "marks";
  canvas.width = drawn.bitmap.width;
  canvas.height = drawn.bitmap.height;
  canvas.style.width = `${drawn.width}px`;
  canvas.style.height = `${drawn.height}px`;
  canvas.getContext("2d")?.drawImage(drawn.bitmap, 0, 0);
  container.replaceChildren(canvas);
}

// take over the worker the page's HTML started as soon as this module runs, so its pictures are not held in a queue
if (typeof window !== "undefined" && window.plumblineFigures) drawingWorker();
