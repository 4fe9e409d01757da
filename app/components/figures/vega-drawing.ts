/**
 * The part of Vega the figure worker draws with (figure-worker.ts): the parser, the view, and the
 * transforms Vega-Lite's compiled figures use (data, encoding and view layout). Vega's own module
 * also registers its geographic, force, hierarchy, label, regression, Voronoi, word-cloud and
 * crossfilter transforms, which no figure uses, and the worker evaluates every module it loads
 * before it can draw: this entry is 417 kB minified against 543 kB (esbuild, Vega 6.4). The
 * packages are Vega's own, at the versions Vega 6.4.0 depends on. A specification naming a
 * transform not registered here fails to parse; the page then draws the figure as a live view
 * with the whole of Vega (rerun-figure.tsx).
 */
import type { parse as vegaParse, View as VegaView } from "vega";
import { transforms } from "vega-dataflow";
import * as encode from "vega-encode";
import { parse as parseSpec } from "vega-parser";
import * as data from "vega-transforms";
import { extend } from "vega-util";
import { View as ViewOf } from "vega-view";
import * as layout from "vega-view-transforms";

extend(transforms, data, layout, encode);

export const parse = parseSpec as typeof vegaParse;
export const View = ViewOf as typeof VegaView;
