/**
 * Vega-Lite to Vega, on the server: the browser then needs only Vega's runtime to draw
 * (app/components/figures/draw-chart.ts says why).
 */
import * as vega from "vega";
import type { Spec } from "vega";
import { compile, type TopLevelSpec } from "vega-lite";

/** Compiles a figure; Vega-Lite's warnings about merged legends are not problems of the figure, so they stay out of the log. */
export function toVega(spec: TopLevelSpec): Spec {
  return compile(spec, { logger: vega.logger(vega.Error) }).spec;
}
