/**
 * Variance inflation per predictor: are any covariates so correlated that their effects cannot be
 * told apart? One bar per variable (with its interactions, predictor-wise as in Fox and Monette
 * 1992), on the standard-error scale, against the plan's threshold.
 */
import type { TopLevelSpec } from "vega-lite";
import { asSpec, dataOf, frame, NO_ARIA, PALETTE, SCHEMA, title } from "./shared/look";
import { defineFigure } from "./shared/module";
import { appliedThreshold, base, FigureUnavailableError, modelResult } from "./shared/source";
import { round } from "./shared/summaries";
import {
  BEYOND,
  WITHIN,
  type FigureBase,
  type PointStatus,
  type SpecOptions,
  type Threshold,
} from "./shared/types";

export interface GvifRow {
  predictor: string;
  /** With its interactions, in words ("with arm"), or "". */
  interactsWith: string;
  gvif: number;
  df: number;
  /** GVIF^(1/(2·df)): the factor by which the predictor's standard error is inflated. */
  adjusted: number;
  status: PointStatus;
  /** The bar's value in words, "beyond" added past the threshold. */
  text: string;
}
export interface GvifData extends FigureBase {
  figure: "gvif";
  threshold: Threshold | null;
  rows: GvifRow[];
}

export function gvifSpec(d: GvifData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const max =
    Math.max(d.threshold?.value ?? 0, ...d.rows.map((r) => r.adjusted).filter(Number.isFinite)) * 1.25 || 1;
  const y = {
    field: "predictor",
    type: "nominal",
    title: null,
    sort: d.rows.map((r) => r.predictor),
    axis: { labelLimit: 200, labelFontSize: 11, labelColor: PALETTE.ink },
  };
  const x = {
    field: "adjusted",
    type: "quantitative",
    title: "Variance inflation, standard-error scale (1 = none)",
    scale: { domain: [0, max], nice: false },
  };
  const domain = [WITHIN, BEYOND];
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    height: opts.height === "container" ? "container" : Math.max(60, d.rows.length * 26),
    title: title(
      "Are any covariates too correlated to estimate apart?",
      "every bar short of the dashed threshold; the standard errors are inflated little by the other covariates.",
      [
        `Bar: the factor by which a variable's standard error grows through its correlation with the others, GVIF to the power 1/(2·df) for a variable of df columns (Fox and Monette 1992), with its interactions.${d.threshold ? ` Dashed: the plan's threshold ${d.threshold.label}.` : ""}`,
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        mark: { type: "bar", height: 14, stroke: PALETTE.ink, strokeWidth: 0.6, ...NO_ARIA },
        encoding: {
          y,
          x,
          fill: {
            field: "status",
            type: "nominal",
            scale: { domain, range: ["#d8e3df", "#efc9bd"] },
            legend: { title: "Variables" },
          },
          tooltip: [
            { field: "predictor", type: "nominal", title: "Variable" },
            { field: "interactsWith", type: "nominal", title: "Interacts with" },
            { field: "adjusted", type: "quantitative", title: "Inflation, SE scale", format: ".3f" },
            { field: "gvif", type: "quantitative", title: "GVIF", format: ".3f" },
            { field: "df", type: "quantitative", title: "Columns (df)", format: "d" },
            { field: "status", type: "nominal", title: "Status" },
          ],
        },
      },
      {
        mark: { type: "text", align: "left", dx: 4, fontSize: 10, color: PALETTE.ink, ...NO_ARIA },
        encoding: { y, x, text: { field: "text", type: "nominal" } },
      },
      ...(d.threshold
        ? [
            {
              data: { values: [{}] },
              mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 },
              encoding: { x: { datum: d.threshold.value } },
            },
          ]
        : []),
      {
        data: { values: [{}] },
        mark: { type: "rule", color: PALETTE.inkSoft, strokeWidth: 1 },
        encoding: { x: { datum: 1 } },
      },
    ],
  });
}

export const gvif = defineFigure<GvifData>({
  key: "gvif",
  checks: ["gvif"],
  data(source, opts) {
    const r = modelResult(source, "gvif");
    if (r.vifByPredictor.length === 0)
      throw new FigureUnavailableError(
        "the model has fewer than two terms, so there is no variance inflation to show",
      );
    const threshold = appliedThreshold(source, "gvif");
    const rows: GvifRow[] = r.vifByPredictor.map((v) => {
      const beyond = threshold !== null && v.adjusted > threshold.value;
      return {
        predictor: v.predictor,
        interactsWith: v.interactsWith.length ? `with ${v.interactsWith.join(", ")}` : "",
        gvif: round(v.gvif),
        df: v.df,
        adjusted: round(v.adjusted),
        status: beyond ? BEYOND : WITHIN,
        text: `${v.adjusted.toFixed(2)}${beyond ? " beyond" : ""}`,
      };
    });
    return { figure: "gvif", ...base(r, opts), withSubjectIds: false, threshold, rows };
  },
  spec: gvifSpec,
  words: {
    caption: "Variance inflation by variable",
    shows:
      "one bar per variable: the factor by which its standard error is inflated by correlation with the other covariates, with the planned threshold as a dashed line",
    healthy: "every bar short of the threshold",
  },
  marked(d) {
    const over = d.rows.filter((r) => r.status === BEYOND);
    return over.length
      ? `Beyond the threshold: ${over.map((r) => `${r.predictor} (${r.adjusted.toFixed(2)})`).join(", ")}.`
      : "No variable is beyond the threshold.";
  },
});
