/** Residual spread by treatment arm: is the spread alike in every arm (equal variance across arms)? */
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  boxLayers,
  dataOf,
  denseLine,
  frame,
  markedSubjects,
  pointMark,
  pText,
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
  denseSelection,
  drawnIndices,
  FigureUnavailableError,
  jitterOf,
  requireTerm,
  subjectsOf,
  who,
} from "./shared/source";
import { boxSummaries, round } from "./shared/summaries";
import type { BoxSummary, FigureBase, PointStatus, SpecOptions, SubjectRef } from "./shared/types";

export interface SpreadRow extends SubjectRef {
  arm: string;
  residual: number;
  jitter: number;
  status: PointStatus;
}
export interface SpreadByArmData extends FigureBase {
  figure: "spread_by_arm";
  treatment: string;
  /** Arms in order, reference first. */
  levels: string[];
  /** Brown–Forsythe test across arms, as the rerun computed it. */
  test: { statistic: number; p: number } | null;
  rows: SpreadRow[];
  /** Box summaries of every subject's residuals by arm. */
  boxes: BoxSummary[];
}

export function spreadByArmSpec(d: SpreadByArmData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const x = {
    field: "arm",
    type: "nominal",
    title: `Treatment arm (${d.treatment})`,
    sort: d.levels,
    axis: { labelAngle: 0 },
  };
  const y = { field: "residual", type: "quantitative", title: residualAxis(d) };
  const test = d.test
    ? `Brown–Forsythe statistic ${d.test.statistic.toFixed(2)}, p ${pText(d.test.p)}.`
    : "Brown–Forsythe test not computed.";
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Is the spread of residuals alike in every arm?",
      "boxes of similar height in every arm, each centred on zero.",
      [
        `${test} Boxes: quartiles and median of every subject; whiskers to 1.5 × IQR.`,
        ...denseLine(d, "the boxes summarise them all"),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      zeroRule("y"),
      ...boxLayers(d.boxes, x, y.title, 44),
      {
        mark: pointMark(),
        encoding: {
          x,
          xOffset: { field: "jitter", type: "quantitative", scale: { domain: [-2.2, 2.2] } },
          y,
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "arm", title: "Arm", type: "nominal" },
            { field: "residual", title: residualName(d) },
          ]),
        },
      },
    ],
  });
}

export const spreadByArm = defineFigure<SpreadByArmData>({
  key: "spread_by_arm",
  checks: ["brown_forsythe"],
  needsTable: true,
  data(source, opts) {
    const { r, obs, n, b, influential, statusOf, residuals } = subjectsOf(source, "spread_by_arm", opts);
    const treatment = r.spec.treatment;
    if (!treatment)
      throw new FigureUnavailableError("the model names no treatment, so there are no arms to compare");
    const t = requireTerm(r, treatment, false);
    const cells = cellsFor(r, opts.table, treatment, "spread_by_arm");
    const bf = r.kind === "linear" ? r.tests.brownForsythe : undefined;
    const dense = denseSelection(r, influential);
    const rows = drawnIndices(n, dense).map((i) => ({
      ...who(r, i, opts.withSubjectIds),
      arm: cells[i],
      residual: round(residuals[i]),
      jitter: round(jitterOf(obs.row[i])),
      status: statusOf(i),
    }));
    const levels = t.levels ?? [];
    return {
      figure: "spread_by_arm",
      ...b,
      treatment,
      levels,
      test: bf && bf.p !== null && bf.statistic !== null ? { statistic: bf.statistic, p: bf.p } : null,
      rows,
      boxes: boxSummaries(levels, cells, residuals),
      ...(dense ? { dense: dense.summary } : {}),
    };
  },
  spec: spreadByArmSpec,
  words: {
    caption: "Residual spread by treatment arm",
    shows: "box plots of the residuals per arm with the subjects as points",
    healthy: "boxes of similar height centred on zero",
  },
  marked: (d) => markedSubjects(d.rows),
});
