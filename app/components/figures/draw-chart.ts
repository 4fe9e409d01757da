/**
 * Draws a Vega specification in the browser. The figures are written in Vega-Lite
 * (app/components/figures/specs.ts) and compiled to Vega on the server, so the browser loads only
 * Vega's runtime, its CSP-safe expression interpreter and the tooltip handler: measured with
 * `npm run bench:figures`, vega-embed's bundle (which carries the Vega-Lite compiler) was 868 kB
 * of script to parse, and compiling thirteen figures in the page cost more main-thread time than
 * drawing them. The view is set up as vega-embed sets it up (interpreter, tooltip handler, hover).
 */
import type { Renderers, Spec } from "vega";
import type { FigureUsermeta, TooltipField } from "~/figures/shared/look";

type Library = {
  vega: typeof import("vega");
  Handler: typeof import("vega-tooltip").Handler;
  expressionInterpreter: typeof import("vega-interpreter").expressionInterpreter;
};

let library: Promise<Library> | null = null;

/**
 * The faces the figures draw text in (specs.ts: titles 600, Vega's axis titles bold, the rest
 * 400). A canvas does not redraw when a font arrives, and the page itself never asks for the bold
 * face, so without this the first figures drew their axis titles in a fallback face.
 */
const FIGURE_FONTS = ['400 11px "Noto Sans"', '600 13px "Noto Sans"', '700 11px "Noto Sans"'];

/** Starts loading the charting code and the figures' fonts (once). */
export function loadChartLibrary(): Promise<Library> {
  library ??= Promise.all([
    import("vega"),
    import("vega-tooltip"),
    import("vega-interpreter"),
    Promise.all(FIGURE_FONTS.map((font) => document.fonts?.load(font))).catch(() => undefined), // a missing face falls back; the figure still draws
  ]).then(([vega, tooltip, interpreter]) => ({
    vega,
    Handler: tooltip.Handler,
    expressionInterpreter: interpreter.expressionInterpreter,
  }));
  return library;
}

/**
 * The hover table of a datum from a figure's deferred tooltip fields (specs.ts, deferTooltips),
 * formatted as Vega-Lite would have: d3-format patterns through Vega's number locale.
 */
function tooltipContent(
  fields: readonly TooltipField[],
  datum: Record<string, unknown>,
  format: (pattern: string) => (v: number) => string,
): Record<string, string> {
  const out: Record<string, string> = {};
  for (const f of fields) {
    const v = datum[f.field];
    if (v === null || v === undefined) continue;
    out[f.title] =
      typeof v === "number" && f.type !== "nominal"
        ? Number.isFinite(v)
          ? format(f.format ?? ".4~g")(v)
          : "not computed"
        : String(v);
  }
  return out;
}

/**
 * Charts draw one at a time, in slices of about 50 ms of main-thread work: a page whose thirteen
 * figures all had their data at once otherwise drew them in one task of about half a second
 * (`npm run bench:figures`), during which the page could not answer a click or a key. A task per
 * figure cost 0.3 s more in all (the page paints between tasks); slices cost about 0.05 s.
 */
let turn: Promise<unknown> = Promise.resolve();
let sliceStart = 0;
const SLICE_MS = 50;

function nextTask(): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, 0));
}

/** Draws `spec` into `container` when its turn comes; resolves to the function that removes the view. */
export function drawChart(container: HTMLElement, spec: Spec, renderer: Renderers): Promise<() => void> {
  const drawn = turn.then(async () => {
    // draw back to back for up to a slice, then let the page answer input and paint
    if (performance.now() - sliceStart > SLICE_MS) {
      await nextTask();
      sliceStart = performance.now();
    }
    return drawNow(container, spec, renderer);
  });
  turn = drawn.catch(() => undefined);
  return drawn;
}

async function drawNow(container: HTMLElement, spec: Spec, renderer: Renderers): Promise<() => void> {
  const { vega, Handler, expressionInterpreter } = await loadChartLibrary();
  // ast: expressions are parsed, then run by the interpreter (no eval, so the page's CSP holds)
  const runtime = vega.parse(spec, undefined, { ast: true });
  const view = new vega.View(runtime, { renderer, expr: expressionInterpreter as never });
  const show = new Handler({ theme: "light" }).call;
  const deferred = (spec.usermeta as FigureUsermeta | undefined)?.tooltips ?? {};
  // Vega's own number locale (memoized d3-format), which its typings do not declare
  const locale = (
    vega as unknown as { defaultLocale(): { format(pattern: string): (v: number) => string } }
  ).defaultLocale();
  const format = (pattern: string) => locale.format(pattern);
  view.tooltip(function (this: unknown, handler, event, item, value) {
    const fields = typeof value === "string" ? deferred[value] : undefined;
    const datum = (item as { datum?: Record<string, unknown> } | null)?.datum;
    show.call(this, handler, event, item, fields && datum ? tooltipContent(fields, datum, format) : value);
  });
  view.hover();
  await view.initialize(container).runAsync();
  return () => view.finalize();
}
