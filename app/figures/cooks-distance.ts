/**
 * Cook's distance by subject: does any single subject move the whole fit? Each subject is a point
 * in data order (no needles), the plan's threshold a dashed line named in the subtitle (not on the
 * plot, where it would meet the points' marks), and the most influential flagged subjects numbered
 * at their points and named in a ranked list beside the plot, so no two names overlap.
 */
import type { TopLevelSpec } from "vega-lite";
import {
  rankedList,
  rankMarks,
  asSpec,
  count,
  dataOf,
  denseLine,
  frame,
  markedSubjects,
  NO_ARIA,
  PALETTE,
  pointMark,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
} from "./shared/look";
import { defineFigure } from "./shared/module";
import {
  appliedThreshold,
  checkOf,
  denseSelection,
  drawnIndices,
  LABELLED,
  labelOf,
  subjectsOf,
  topBy,
  who,
} from "./shared/source";
import { blockMaxima, round } from "./shared/summaries";
import type {
  FigureBase,
  InfluenceBlock,
  PointStatus,
  SpecOptions,
  SubjectRef,
  Threshold,
} from "./shared/types";

export interface InfluenceRow extends SubjectRef {
  /** Position of the subject in data order, 1..n. */
  order: number;
  cooks: number;
  leverage: number;
  /** Null for generalized linear models, which have no DFFITS. */
  dffits: number | null;
  status: PointStatus;
  /** Set for the few most influential subjects: drawn beside their point. */
  label: string | null;
  /** 1 for the most influential labelled subject (labels are staggered by it). */
  labelRank?: number | null;
}
export interface InfluenceData extends FigureBase {
  figure: "influence";
  threshold: Threshold | null;
  rows: InfluenceRow[];
  /** Dense figures: the largest Cook's distance in blocks of consecutive subjects not drawn one by one. */
  blocks?: InfluenceBlock[];
}

/** A dense influence figure's blocks of consecutive subjects: about one per pixel and a half. */
const BLOCKS = 400;

export function influenceSpec(d: InfluenceData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const tip = tooltip(d, [
    { field: "order", title: "Position in data order", format: "d" },
    { field: "cooks", title: "Cook's distance" },
    { field: "leverage", title: "Leverage" },
    ...(d.rows.some((r) => r.dffits !== null) ? [{ field: "dffits", title: "DFFITS" }] : []),
  ]);
  const x = {
    field: "order",
    type: "quantitative",
    title: "Subject, in data order (position 1 to n)",
    scale: { domain: [0, d.n + 1], nice: false },
  };
  // head room above the largest point for its name
  const top = Math.max(
    d.threshold?.value ?? 0,
    ...d.rows.map((r) => r.cooks).filter(Number.isFinite),
    ...(d.blocks ?? []).map((b) => b.cooks),
  );
  const y = {
    field: "cooks",
    type: "quantitative",
    title: "Cook's distance (no unit)",
    scale: { domain: [0, top > 0 ? top * 1.18 : 1], nice: false },
  };
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Does any single subject move the whole fit?",
      "every subject well below the dashed line; no single subject stands out.",
      [
        `Points: Cook's distance of each subject.${d.threshold ? ` Dashed line: the plan's threshold ${d.threshold.label}.` : " The plan sets no Cook's distance threshold."} Numbered: the most influential subjects beyond it, named in the list beside the plot.`,
        ...denseLine(
          d,
          `grey bars show the largest Cook's distance in each run of ${d.blocks?.[0] ? count(d.blocks[0].to - d.blocks[0].from + 1) : "a few"} consecutive subjects`,
        ),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...(d.blocks
        ? [
            {
              data: { values: d.blocks },
              mark: { type: "rect", color: PALETTE.rule, ...NO_ARIA },
              encoding: {
                x: { ...x, field: "from" },
                x2: { field: "to" },
                y: { ...y, field: "cooks" },
                y2: { datum: 0 },
                tooltip: [
                  { field: "from", type: "quantitative", title: "From position", format: "d" },
                  { field: "to", type: "quantitative", title: "To position", format: "d" },
                  { field: "cooks", type: "quantitative", title: "Largest Cook's distance", format: ".4~g" },
                ],
              },
            },
          ]
        : []),
      ...(d.threshold
        ? [
            {
              data: { values: [{}] },
              mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 },
              encoding: { y: { datum: d.threshold.value } },
            },
          ]
        : []),
      { mark: pointMark(), encoding: { x, y, ...statusEncoding(d), tooltip: tip } },
      ...rankMarks(x, y, d.n),
      rankedList(
        ["Most influential", "beyond the threshold:"],
        d.rows
          .filter((r) => r.labelRank != null)
          .sort((a, b) => (a.labelRank ?? 0) - (b.labelRank ?? 0))
          .map((r) => (d.withSubjectIds ? `${r.label} (${r.cooks.toPrecision(3)})` : r.cooks.toPrecision(3))),
        "No subject beyond the threshold.",
      ),
    ],
  });
}

export const cooksDistance = defineFigure<InfluenceData>({
  key: "influence",
  checks: ["cooks_distance"],
  data(source, opts) {
    const { r, obs, n, b, influential, statusOf } = subjectsOf(source, "influence", opts);
    const threshold = appliedThreshold(source, "cooks_distance");
    const byCook = new Set((checkOf(source, "cooks_distance")?.flagged ?? []).map((f) => f.row));
    const keys = threshold ? byCook : influential;
    const top = topBy(obs.cooksDistance, LABELLED, (i) => byCook.has(obs.row[i]));
    const dense = denseSelection(r, keys);
    const rows: InfluenceRow[] = drawnIndices(n, dense).map((i) => ({
      ...who(r, i, opts.withSubjectIds),
      order: i + 1,
      cooks: round(obs.cooksDistance[i]),
      leverage: round(obs.leverage[i]),
      dffits: r.kind === "linear" ? round(r.observations.dffits[i]) : null,
      status: statusOf(i, keys),
      label: top.has(i) ? labelOf(r, i, opts.withSubjectIds, top) : null,
      labelRank: top.get(i) ?? null,
    }));
    const blocks = dense
      ? blockMaxima(
          obs.cooksDistance,
          obs.row.map((_, i) => i).filter((i) => !dense.drawn.has(i)),
          n,
          BLOCKS,
        )
      : undefined;
    return { figure: "influence", ...b, threshold, rows, ...(dense ? { dense: dense.summary, blocks } : {}) };
  },
  spec: influenceSpec,
  words: {
    caption: "Cook's distance by subject",
    shows:
      "each subject's Cook's distance as a point in data order, with the planned threshold as a dashed line and the most influential subjects numbered and listed beside the plot",
    healthy: "no subject far above the threshold line",
  },
  marked: (d) => markedSubjects(d.rows),
});
