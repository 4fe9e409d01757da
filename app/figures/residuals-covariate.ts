/** Residuals against one covariate: does the spread stay level and even across its range or levels? */
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  boxLayers,
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
import { residualAxis, residualName } from "./shared/residual-words";
import {
  cellsFor,
  cellsOf,
  denseSelection,
  drawnIndices,
  interactionNote,
  jitterOf,
  requireTerm,
  smoothOf,
  subjectsOf,
  unitOf,
  who,
} from "./shared/source";
import { boxSummaries, round } from "./shared/summaries";
import type {
  BoxSummary,
  DensityCell,
  FigureBase,
  PointStatus,
  SmoothPoint,
  SpecOptions,
  SubjectRef,
} from "./shared/types";

export interface ResidualsCovariateRow extends SubjectRef {
  /** Covariate value (continuous) or level (categorical). */
  x: number | string;
  residual: number;
  /** Deterministic horizontal offset in [−1, 1] for strips of a categorical covariate. */
  jitter: number;
  status: PointStatus;
}
export interface ResidualsCovariateData extends FigureBase {
  figure: "residuals_covariate";
  term: string;
  termUnit: string;
  kind: "continuous" | "categorical";
  /** Level order for a categorical covariate, reference first. */
  levels?: string[];
  rows: ResidualsCovariateRow[];
  /** Dense figures of a continuous covariate: the subjects not drawn one by one. */
  cells?: DensityCell[];
  /** Box summaries of every subject's residuals by level (categorical covariates only). */
  boxes?: BoxSummary[];
  /** Loess smoother (continuous covariates only). */
  smooth?: SmoothPoint[];
}

export function residualsCovariateSpec(d: ResidualsCovariateData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const yAxis = { field: "residual", type: "quantitative", title: residualAxis(d) };
  const tip = tooltip(d, [
    { field: "x", title: d.term, type: d.kind === "categorical" ? "nominal" : "quantitative" },
    { field: "residual", title: residualName(d) },
  ]);
  const extra = [...(d.note ? [d.note] : [])];
  if (d.kind === "continuous") {
    return asSpec({
      $schema: SCHEMA,
      ...frame(d, opts),
      title: title(
        `Do residuals stay level and even across ${d.term}?`,
        "an even band around zero with a flat smoother; a curve suggests the wrong functional form.",
        [
          "Brass line: loess smoother (span 0.5), of every subject. Dashed: zero.",
          ...denseLine(d, "shading counts the subjects in each cell"),
          ...extra,
        ],
        width,
      ),
      ...dataOf(d.rows, opts),
      layer: [
        ...(d.cells ? [cellsLayer(d.cells, d.term, residualName(d))] : []),
        zeroRule("y"),
        {
          mark: pointMark(),
          encoding: {
            x: {
              field: "x",
              type: "quantitative",
              title: `${d.term} (${d.termUnit})`,
              scale: { zero: false },
            },
            y: yAxis,
            ...statusEncoding(d),
            tooltip: tip,
          },
        },
        loessLayer(d.smooth ?? []),
      ],
    });
  }
  const x = {
    field: "x",
    type: "nominal",
    title: `${d.term} (level)`,
    sort: d.levels,
    axis: { labelAngle: 0 },
  };
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      `Are residuals centred and equally spread at every level of ${d.term}?`,
      "boxes centred on zero with similar heights at every level.",
      [
        "Boxes: quartiles and median of every subject; whiskers to 1.5 × IQR. Dashed: zero.",
        ...denseLine(d, "the boxes summarise them all"),
        ...extra,
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      zeroRule("y"),
      ...boxLayers(d.boxes ?? [], x, yAxis.title, 36),
      {
        mark: pointMark(),
        encoding: {
          x,
          xOffset: { field: "jitter", type: "quantitative", scale: { domain: [-2.2, 2.2] } },
          y: yAxis,
          ...statusEncoding(d),
          tooltip: tip,
        },
      },
    ],
  });
}

export const residualsCovariate = defineFigure<ResidualsCovariateData>({
  key: "residuals_covariate",
  checks: [],
  perTerm: "continuous",
  needsTable: true,
  data(source, opts) {
    const { r, obs, n, b, influential, statusOf, residuals } = subjectsOf(
      source,
      "residuals_covariate",
      opts,
    );
    const t = requireTerm(r, opts.term, false);
    const cells = cellsFor(r, opts.table, t.name, "residuals_covariate");
    const continuous = t.kind === "continuous";
    const values = continuous ? cells.map(Number) : [];
    const dense = denseSelection(r, influential);
    const rows = drawnIndices(n, dense).map((i) => ({
      ...who(r, i, opts.withSubjectIds),
      x: continuous ? round(values[i]) : cells[i],
      residual: round(residuals[i]),
      jitter: round(jitterOf(obs.row[i])),
      status: statusOf(i),
    }));
    const common = {
      figure: "residuals_covariate" as const,
      ...b,
      term: t.name,
      termUnit: continuous ? unitOf(t.name, opts) : "level",
      kind: t.kind,
      note: interactionNote(r, t.name),
      rows,
      ...(dense ? { dense: dense.summary } : {}),
    };
    if (continuous)
      return {
        ...common,
        ...(dense ? { cells: cellsOf(values, residuals, dense) } : {}),
        smooth: smoothOf(values, residuals),
      };
    return { ...common, levels: t.levels ?? [], boxes: boxSummaries(t.levels ?? [], cells, residuals) };
  },
  spec: residualsCovariateSpec,
  words: {
    caption: "Level and spread of the residuals across a covariate",
    shows: "each subject's residual against the covariate",
    healthy: "an even band around zero",
  },
  marked: (d) => markedSubjects(d.rows),
});
