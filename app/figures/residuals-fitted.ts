/** Level and spread of the residuals across fitted values: do they stay level and even (constant variance, no missed curve)? */
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  cellsLayer,
  dataOf,
  denseLine,
  frame,
  loessLayer,
  markedSubjects,
  pointMark,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
  zeroRule,
} from "./shared/look";
import { defineFigure } from "./shared/module";
import { fittedAxis, residualAxis, residualName } from "./shared/residual-words";
import { cellsOf, denseSelection, drawnIndices, smoothOf, subjectsOf, who } from "./shared/source";
import { round } from "./shared/summaries";
import type {
  DensityCell,
  FigureBase,
  PointStatus,
  SmoothPoint,
  SpecOptions,
  SubjectRef,
} from "./shared/types";

export interface ResidualsFittedRow extends SubjectRef {
  fitted: number;
  residual: number;
  status: PointStatus;
}
export interface ResidualsFittedData extends FigureBase {
  figure: "residuals_fitted";
  rows: ResidualsFittedRow[];
  /** Dense figures: the subjects not drawn one by one. */
  cells?: DensityCell[];
  /** Loess smoother of the residuals on the fitted values (span 0.5). */
  smooth: SmoothPoint[];
}

export function residualsFittedSpec(d: ResidualsFittedData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Do residuals stay level and even across fitted values?",
      "an even band around zero with a flat smoother; no funnel, no curve.",
      [
        "Brass line: loess smoother (span 0.5), of every subject. Dashed: zero.",
        ...denseLine(d, "shading counts the subjects in each cell"),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.cells ? [cellsLayer(d.cells, "Fitted", residualName(d))] : []),
      zeroRule("y"),
      {
        mark: pointMark(),
        encoding: {
          x: { field: "fitted", type: "quantitative", title: fittedAxis(d), scale: { zero: false } },
          y: { field: "residual", type: "quantitative", title: residualAxis(d) },
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "fitted", title: "Fitted" },
            { field: "residual", title: residualName(d) },
          ]),
        },
      },
      loessLayer(d.smooth),
    ],
  });
}

export const residualsFitted = defineFigure<ResidualsFittedData>({
  key: "residuals_fitted",
  checks: ["breusch_pagan", "overdispersion"],
  data(source, opts) {
    const { r, obs, n, b, influential, statusOf, residuals } = subjectsOf(source, "residuals_fitted", opts);
    const dense = denseSelection(r, influential);
    const rows = drawnIndices(n, dense).map((i) => ({
      ...who(r, i, opts.withSubjectIds),
      fitted: round(obs.fitted[i]),
      residual: round(residuals[i]),
      status: statusOf(i),
    }));
    const cells = cellsOf(obs.fitted, residuals, dense);
    return {
      figure: "residuals_fitted",
      ...b,
      ...(dense ? { dense: dense.summary, cells } : {}),
      rows,
      smooth: smoothOf(obs.fitted, residuals),
    };
  },
  spec: residualsFittedSpec,
  words: {
    caption: "Level and spread of the residuals across fitted values",
    shows:
      "a scatter plot of each subject's residual against the fitted value, with a loess smoother and a dashed line at zero",
    healthy: "an even band around zero with a flat smoother, no funnel and no curve",
  },
  marked: (d) => markedSubjects(d.rows),
});
