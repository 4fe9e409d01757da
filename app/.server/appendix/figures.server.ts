/**
 * Figures drawn on the server for the Word appendix and its preview: the same Vega-Lite
 * specifications the results page draws in the browser (app/components/figures/specs.ts),
 * compiled by Vega-Lite, rendered by Vega headless (renderer "none", toSVG; no canvas package)
 * with Noto Sans named in the config, then rasterised by resvg with the shipped TTF files only
 * (no system fonts, so the picture is the same on every machine).
 */
import { createHash } from "node:crypto";
import { Resvg, type ResvgRenderOptions } from "@resvg/resvg-js";
import * as vega from "vega";
import type { TopLevelSpec } from "vega-lite";
import { toVega } from "../figures/compile.server";
import { FONT_FAMILY, notoSans } from "./fonts.server";

export interface RenderedFigure {
  svg: string;
  png: Buffer;
  /** Pixel size of the PNG. */
  width: number;
  height: number;
}

/** Pixels per CSS pixel of the SVG: 2 gives about 190 dpi at the width the appendix prints. */
export const PNG_SCALE = 2;

/** Vega-Lite to SVG. aria off (smaller SVG; the appendix carries its own alt text). */
export async function specToSvg(spec: TopLevelSpec): Promise<string> {
  const withFont = {
    ...spec,
    config: { ...(spec.config ?? {}), font: FONT_FAMILY, aria: false },
  } as TopLevelSpec;
  const compiled = toVega(withFont);
  const view = new vega.View(vega.parse(compiled), { renderer: "none" });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}

/** resvg's options: the shipped Noto Sans faces only (resvg silently drops text when no font matches). */
export function resvgOptions(scale = PNG_SCALE): ResvgRenderOptions {
  const fonts = notoSans();
  return {
    fitTo: { mode: "zoom", value: scale },
    font: {
      loadSystemFonts: false,
      fontFiles: [fonts.regularPath, fonts.boldPath],
      defaultFontFamily: FONT_FAMILY,
      sansSerifFamily: FONT_FAMILY,
    },
  };
}

/** SVG to PNG with the shipped Noto Sans faces; system fonts are not loaded. */
export function svgToPng(svg: string, scale = PNG_SCALE): { png: Buffer; width: number; height: number } {
  const image = new Resvg(svg, resvgOptions(scale)).render();
  return { png: image.asPng(), width: image.width, height: image.height };
}

const cache = new Map<string, RenderedFigure>();
const CACHE_SIZE = 48;

/** Renders a specification to SVG and PNG; the same specification is rendered once (small cache). */
export async function renderFigure(spec: TopLevelSpec): Promise<RenderedFigure> {
  const key = createHash("sha256").update(JSON.stringify(spec)).digest("hex");
  const hit = cache.get(key);
  if (hit) return hit;
  const svg = await specToSvg(spec);
  const { png, width, height } = svgToPng(svg);
  const out = { svg, png, width, height };
  cache.set(key, out);
  if (cache.size > CACHE_SIZE) cache.delete(cache.keys().next().value as string);
  return out;
}
