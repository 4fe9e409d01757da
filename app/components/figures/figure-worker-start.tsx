import workerUrl from "./figure-worker.ts?worker&url";
import { useNonce } from "../nonce";
import { FRAME_URL_ATTRIBUTE, TARGET_ATTRIBUTE, type DrawAnswer } from "./frame-spec";

/** What the early start leaves for figure-bitmaps.ts, which takes the worker over. */
export interface EarlyFigures {
  worker: Worker;
  /** Keys already asked for. */
  sent: string[];
  /** Answers that came before the page's scripts took over. */
  answers: DrawAnswer[];
  failed: boolean;
}

declare global {
  interface Window {
    plumblineFigures?: EarlyFigures;
  }
}

/**
 * The two inline scripts below are sent as their own source text, so they use no outside names.
 * The first runs where the results page begins: it starts the figure worker, which loads Vega
 * and fetches every figure while the page's HTML is still being read.
 */
export function startWorker(url: string, figures: string[]): void {
  try {
    performance.mark("figures:start"); // read by `npm run bench:figures`
    if (
      typeof OffscreenCanvas === "undefined" ||
      typeof FontFace === "undefined" ||
      typeof Worker === "undefined"
    )
      return;
    // the addresses also ride in the worker's own address, so it fetches them as its module first
    // runs: messages posted now reach it only when this busy main thread passes them on
    const worker = new Worker(url + "#" + encodeURIComponent(JSON.stringify(figures)), {
      type: "module",
      name: "figures",
    });
    const early: EarlyFigures = { worker, sent: [], answers: [], failed: false };
    worker.onmessage = (e: MessageEvent<DrawAnswer>) => early.answers.push(e.data);
    worker.onerror = () => {
      early.failed = true;
    };
    for (const figure of figures) worker.postMessage({ prefetch: figure });
    window.plumblineFigures = early;
  } catch {
    // the page's scripts draw the figures themselves
  }
}

/**
 * The second runs after the last figure frame: it asks the worker for each frame at the frame's
 * size. The key is frame-spec.ts's bitmapKey, written out again.
 */
export function askForFrames(frameAttribute: string, targetAttribute: string): void {
  const early = window.plumblineFigures;
  if (!early) return;
  const scale = window.devicePixelRatio || 1;
  document.querySelectorAll("[" + frameAttribute + "]").forEach((frame) => {
    const target = frame.querySelector("[" + targetAttribute + "]");
    const figure = frame.getAttribute(frameAttribute);
    if (!target || !figure || !(target.clientWidth > 0)) return;
    const key = figure + " " + target.clientWidth + "x" + target.clientHeight + "@" + scale;
    if (early.sent.indexOf(key) >= 0) return;
    early.sent.push(key);
    early.worker.postMessage({
      key,
      url: figure,
      width: target.clientWidth,
      height: target.clientHeight,
      scale,
    });
  });
}

function InlineScript({ source }: { source: string }) {
  const nonce = useNonce();
  return <script nonce={nonce} suppressHydrationWarning dangerouslySetInnerHTML={{ __html: source }} />;
}

/**
 * Placed where the results page begins, with the addresses of the figures it shows (in page
 * order): measured with `npm run bench:figures`, figures drawn after the page hydrated were all
 * ready about 0.5 s later than figures started from the HTML.
 */
export function FigureWorkerStart({ figures }: { figures: string[] }) {
  return (
    <InlineScript
      source={`(${startWorker.toString()})(${JSON.stringify(workerUrl)}, ${JSON.stringify(figures)});`}
    />
  );
}

const FRAMES_READY = `(${askForFrames.toString()})(${JSON.stringify(FRAME_URL_ATTRIBUTE)}, ${JSON.stringify(TARGET_ATTRIBUTE)});`;

/** Placed after the results page's last figure frame. */
export function FigureFramesReady() {
  return <InlineScript source={FRAMES_READY} />;
}
