/**
 * The results page's inline scripts (figure-worker-start.tsx) ask the figure worker for each
 * frame under a key they write out themselves, because they are sent as their own source text;
 * the page's scripts later wait for the same pictures under frame-spec.ts's bitmapKey. If the two
 * drifted apart, every figure would be drawn twice and the early start would be wasted without
 * any failure to see: this pins them together. Invented frames; no source other than the code.
 */
import { afterEach, describe, expect, it, vi } from "vitest";
import { askForFrames, startWorker } from "~/components/figures/figure-worker-start";
import { bitmapKey, FRAME_URL_ATTRIBUTE, TARGET_ATTRIBUTE } from "~/components/figures/frame-spec";

class FakeWorker {
  static made: FakeWorker[] = [];
  posted: unknown[] = [];
  onmessage: unknown = null;
  onerror: unknown = null;
  constructor(readonly url: string) {
    FakeWorker.made.push(this);
  }
  postMessage(message: unknown) {
    this.posted.push(message);
  }
}

function frame(url: string, width: number, height: number) {
  const target = { clientWidth: width, clientHeight: height };
  return {
    getAttribute: (name: string) => (name === FRAME_URL_ATTRIBUTE ? url : null),
    querySelector: (sel: string) => (sel === `[${TARGET_ATTRIBUTE}]` ? target : null),
  };
}

afterEach(() => {
  vi.unstubAllGlobals();
  FakeWorker.made = [];
});

describe("the results page's early figure start", () => {
  it("prefetches every figure, then asks for each frame under the key the page waits for, once per address and size", () => {
    const frames = [
      frame("/f/influence", 900, 416),
      frame("/f/influence", 900, 416),
      frame("/f/qq", 900, 416),
      frame("/f/qq", 440, 416),
    ];
    const win: { devicePixelRatio: number; plumblineFigures?: unknown } = { devicePixelRatio: 2 };
    vi.stubGlobal("window", win);
    vi.stubGlobal("OffscreenCanvas", class {});
    vi.stubGlobal("FontFace", class {});
    vi.stubGlobal("Worker", FakeWorker);
    vi.stubGlobal("document", {
      querySelectorAll: (sel: string) => (sel === `[${FRAME_URL_ATTRIBUTE}]` ? frames : []),
    });

    startWorker("/assets/figure-worker.js", ["/f/influence", "/f/qq"]);
    askForFrames(FRAME_URL_ATTRIBUTE, TARGET_ATTRIBUTE);

    expect(FakeWorker.made).toHaveLength(1);
    const [worker] = FakeWorker.made;
    // the addresses ride in the worker's own address too, so it fetches them as soon as it runs
    expect(worker.url).toBe(
      `/assets/figure-worker.js#${encodeURIComponent(JSON.stringify(["/f/influence", "/f/qq"]))}`,
    );
    expect(worker.posted).toEqual([
      { prefetch: "/f/influence" },
      { prefetch: "/f/qq" },
      { key: bitmapKey("/f/influence", 900, 416, 2), url: "/f/influence", width: 900, height: 416, scale: 2 },
      { key: bitmapKey("/f/qq", 900, 416, 2), url: "/f/qq", width: 900, height: 416, scale: 2 },
      { key: bitmapKey("/f/qq", 440, 416, 2), url: "/f/qq", width: 440, height: 416, scale: 2 },
    ]);
    expect((win.plumblineFigures as { sent: string[] }).sent).toEqual([
      bitmapKey("/f/influence", 900, 416, 2),
      bitmapKey("/f/qq", 900, 416, 2),
      bitmapKey("/f/qq", 440, 416, 2),
    ]);
  });

  it("starts nothing where the browser cannot draw off the page, and the page then draws its figures itself", () => {
    const win: { devicePixelRatio: number; plumblineFigures?: unknown } = { devicePixelRatio: 1 };
    vi.stubGlobal("window", win);
    vi.stubGlobal("Worker", FakeWorker);
    vi.stubGlobal("OffscreenCanvas", undefined);
    startWorker("/assets/figure-worker.js", ["/f/qq"]);
    askForFrames(FRAME_URL_ATTRIBUTE, TARGET_ATTRIBUTE);
    expect(FakeWorker.made).toHaveLength(0);
    expect(win.plumblineFigures).toBeUndefined();
  });
});
