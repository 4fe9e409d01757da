/**
 * Component-plus-residual plot of one continuous covariate: is its effect straight? For a
 * generalized linear model the component and the working residual are on the link scale, and the
 * axis and subtitle say so.
 */
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  cellsLayer,
  dataOf,
  denseLine,
  frame,
  loessLayer,
  markedSubjects,
  PALETTE,
  pointMark,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
} from "./shared/look";
import { defineFigure } from "./shared/module";
import { linkScale, linkUnit } from "./shared/residual-words";
import {
  cellsFor,
  cellsOf,
  denseSelection,
  drawnIndices,
  FigureUnavailableError,
  interactionNote,
  requireTerm,
  smoothOf,
  subjectsOf,
  unitOf,
  who,
} from "./shared/source";
import { round } from "./shared/summaries";
import type {
  DensityCell,
  FigureBase,
  PointStatus,
  SmoothPoint,
  SpecOptions,
  SubjectRef,
} from "./shared/types";

export interface PartialResidualRow extends SubjectRef {
  x: number;
  /** Component plus residual. */
  partial: number;
  /** The fitted component b·x, centred. */
  component: number;
  status: PointStatus;
}
export interface PartialResidualsData extends FigureBase {
  figure: "partial_residuals";
  term: string;
  termUnit: string;
  coefficient: number;
  rows: PartialResidualRow[];
  /** The fitted component at the smallest and largest value of the covariate: a straight line. */
  fittedLine: { x: number; component: number }[];
  /** Dense figures: the subjects not drawn one by one. */
  cells?: DensityCell[];
  /** Loess smoother of the partial residuals on the covariate. */
  smooth: SmoothPoint[];
}

export function partialResidualsSpec(d: PartialResidualsData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const xEnc = {
    field: "x",
    type: "quantitative",
    title: `${d.term} (${d.termUnit})`,
    scale: { zero: false },
  };
  const yTitle = d.glm
    ? `Component + working residual (${linkUnit(d)})`
    : `Component plus residual (${d.responseUnit})`;
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      `Is the effect of ${d.term} a straight line${d.glm ? " on the link scale" : ""}?`,
      "the smoother follows the straight line of the fitted effect; a bend means the effect is not linear.",
      [
        `Grey line: fitted linear effect. Brass line: loess smoother (span 0.5), of every subject.${d.glm ? ` Both on the link scale, ${linkScale(d)}.` : ""}`,
        ...denseLine(d, "shading counts the subjects in each cell"),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.cells ? [cellsLayer(d.cells, d.term, "Component + residual")] : []),
      {
        mark: pointMark(),
        encoding: {
          x: xEnc,
          y: { field: "partial", type: "quantitative", title: yTitle },
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "x", title: d.term },
            { field: "partial", title: d.glm ? "Component + working residual" : "Component + residual" },
            { field: "component", title: "Fitted component" },
          ]),
        },
      },
      {
        data: { values: d.fittedLine },
        mark: { type: "line", color: PALETTE.inkSoft, strokeWidth: 1.5 },
        encoding: { x: xEnc, y: { field: "component", type: "quantitative" } },
      },
      loessLayer(d.smooth),
    ],
  });
}

export const partialResiduals = defineFigure<PartialResidualsData>({
  key: "partial_residuals",
  checks: ["reset", "linearity_glm"],
  perTerm: "continuous",
  needsTable: true,
  data(source, opts) {
    const { r, n, b, influential, statusOf } = subjectsOf(source, "partial_residuals", opts);
    const t = requireTerm(r, opts.term, true);
    const partial = r.observations.partialResiduals.find((p) => p.term === t.name);
    if (!partial) throw new FigureUnavailableError(`the rerun stored no partial residuals for "${t.name}"`);
    const coef = r.coefficients.find((c) => c.term === t.name);
    const x = cellsFor(r, opts.table, t.name, "partial_residuals").map(Number);
    // the component b·x centred: partial residual minus the (raw) residual
    const component = partial.values.map(
      (v, i) => v - (r.kind === "linear" ? r.observations.residual[i] : r.observations.workingResidual[i]),
    );
    const dense = denseSelection(r, influential);
    const rows = drawnIndices(n, dense).map((i) => ({
      ...who(r, i, opts.withSubjectIds),
      x: round(x[i]),
      partial: round(partial.values[i]),
      component: round(component[i]),
      status: statusOf(i),
    }));
    // the component is linear in x: its ends are the whole line
    const ends = x.map((_, i) => i).filter((i) => Number.isFinite(x[i]) && Number.isFinite(component[i]));
    const lo = ends.reduce((m, i) => (x[i] < x[m] ? i : m), ends[0]);
    const hi = ends.reduce((m, i) => (x[i] > x[m] ? i : m), ends[0]);
    const fittedLine = ends.length
      ? [lo, hi].map((i) => ({ x: round(x[i]), component: round(component[i]) }))
      : [];
    return {
      figure: "partial_residuals",
      ...b,
      term: t.name,
      termUnit: unitOf(t.name, opts),
      coefficient: coef?.estimate ?? NaN,
      note: interactionNote(r, t.name),
      rows,
      fittedLine,
      ...(dense ? { dense: dense.summary, cells: cellsOf(x, partial.values, dense) } : {}),
      smooth: smoothOf(x, partial.values),
    };
  },
  spec: partialResidualsSpec,
  words: {
    caption: "Partial residuals",
    shows:
      "the component-plus-residual values against the covariate, with the fitted linear effect and a loess smoother",
    healthy: "the smoother following the straight line of the fitted effect",
  },
  marked: (d) => markedSubjects(d.rows),
});
