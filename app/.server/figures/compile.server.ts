/**
 * Vega-Lite to Vega, on the server: the browser then needs only Vega's runtime to draw
 * (app/components/figures/draw-chart.ts says why).
 */
import type { Spec } from "vega";
import { compile, type TopLevelSpec } from "vega-lite";

export function toVega(spec: TopLevelSpec): Spec {
  return compile(spec).spec;
}
