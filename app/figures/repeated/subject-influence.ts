/**
 * Each subject's Cook's distance in a repeated-measures rerun (all of its records deleted
 * together, the covariance held at the full-data estimate): does any one subject move the fit?
 * Subjects in data order, the plan's threshold k/m (m subjects; 4/m by default) as a dashed line,
 * the most influential subjects beyond it numbered at their points and listed beside the plot,
 * by name only for viewers who may see subjects. Supports the influence check.
 */
import type { TopLevelSpec } from "vega-lite";
import { REPEATED_CHECKS } from "~/engine/repeated/repeated-check-catalogue";
import {
  asSpec,
  count,
  dataOf,
  frame,
  markedSubjects,
  NO_ARIA,
  ONE,
  PALETTE,
  pointMark,
  rankedList,
  rankMarks,
  SCHEMA,
  statusEncoding,
  title,
  tooltip,
} from "../shared/look";
import { defineFigure } from "../shared/module";
import { appliedThreshold, LABELLED, topBy } from "../shared/source";
import { blockMaxima, round } from "../shared/summaries";
import {
  BEYOND,
  DENSE_FROM,
  DENSE_POINTS,
  WITHIN,
  type FigureBase,
  type InfluenceBlock,
  type PointStatus,
  type SpecOptions,
  type SubjectRef,
  type Threshold,
} from "../shared/types";
import { flaggedSubjects, repeatedBase, repeatedResult } from "./repeated-source";

export interface SubjectInfluenceRow extends SubjectRef {
  /** The subject's position in data order, 1..m. */
  order: number;
  cooks: number;
  records: number;
  status: PointStatus;
  /** Set for the few most influential subjects beyond the threshold: their name, or their rank. */
  label: string | null;
  labelRank: number | null;
}

export interface SubjectInfluenceData extends FigureBase {
  figure: "repeated_influence";
  /** Subjects analysed (m). */
  subjects: number;
  threshold: Threshold;
  /** True when the threshold is the catalogue's default because the plan does not check influence. */
  defaultThreshold: boolean;
  primaryVisit: string;
  rows: SubjectInfluenceRow[];
  /** Dense figures: the largest Cook's distance in blocks of consecutive subjects not drawn one by one. */
  blocks?: InfluenceBlock[];
}

const BLOCKS = 400;

/** The catalogue's k of the influence check (4). */
const DEFAULT_K = REPEATED_CHECKS.find((c) => c.key === "repeated_influence")?.defaultThreshold ?? 4;

export function subjectInfluenceSpec(d: SubjectInfluenceData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const x = {
    field: "order",
    type: "quantitative",
    title: `Subject, in data order (position 1 to ${d.subjects})`,
    scale: { domain: [0, d.subjects + 1], nice: false },
  };
  const top = Math.max(
    d.threshold.value,
    ...d.rows.map((r) => r.cooks).filter(Number.isFinite),
    ...(d.blocks ?? []).map((b) => b.cooks),
  );
  const y = {
    field: "cooks",
    type: "quantitative",
    title: "Cook's distance of the subject's records (no unit)",
    scale: { domain: [0, top > 0 ? top * 1.18 : 1], nice: false },
  };
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Does any one subject move the fit?",
      "every subject well below the dashed line; no subject stands apart from the rest.",
      [
        `Points: Cook's distance of each subject, all its records left out together (covariance held at the full-data estimate). Dashed line: ${d.defaultThreshold ? "the default threshold" : "the plan's threshold"} ${d.threshold.label}. Numbered: the most influential subjects beyond it, listed beside the plot.`,
        ...(d.dense
          ? [
              `${count(d.dense.total)} subjects: grey bars show the largest Cook's distance in each run of consecutive subjects; triangles: ${d.dense.drawn < d.dense.beyond ? `the ${count(d.dense.drawn)} largest of ` : ""}the ${count(d.dense.beyond)} beyond the threshold.`,
            ]
          : []),
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
              },
            },
          ]
        : []),
      {
        data: ONE,
        mark: { type: "rule", color: PALETTE.finding, strokeDash: [6, 3], strokeWidth: 1.2 },
        encoding: { y: { datum: d.threshold.value } },
      },
      {
        mark: pointMark(),
        encoding: {
          x,
          y,
          ...statusEncoding(d),
          tooltip: tooltip(d, [
            { field: "order", title: "Position in data order", format: "d" },
            { field: "cooks", title: "Cook's distance" },
            { field: "records", title: "Records", format: "d" },
          ]),
        },
      },
      ...rankMarks(x, y, d.subjects),
      rankedList(
        ["Most influential", "beyond the threshold:"],
        d.rows
          .filter((r) => r.labelRank !== null)
          .sort((a, b) => (a.labelRank ?? 0) - (b.labelRank ?? 0))
          .map((r) => (d.withSubjectIds ? `${r.label} (${r.cooks.toPrecision(3)})` : r.cooks.toPrecision(3))),
        "No subject beyond the threshold.",
      ),
    ],
  });
}

export const subjectInfluence = defineFigure<SubjectInfluenceData>({
  key: "repeated_influence",
  checks: ["repeated_influence"],
  data(source, opts) {
    const r = repeatedResult(source, "repeated_influence");
    const m = r.subjects.length;
    const applied = appliedThreshold(source, "repeated_influence");
    const threshold = applied ?? {
      value: DEFAULT_K / m,
      label: `${DEFAULT_K}/m = ${(DEFAULT_K / m).toPrecision(3)}`,
    };
    const checked = flaggedSubjects(source, r);
    // without the check, the subjects beyond the default line are marked by it
    const beyond = (i: number) =>
      applied ? checked.has(r.subjects[i].id) : r.subjects[i].cooksDistance > threshold.value;
    const cooks = r.subjects.map((s) => s.cooksDistance);
    const top = topBy(cooks, LABELLED, beyond);
    const firstRow = new Map<string, number>();
    r.observations.id.forEach((id, i) => {
      if (!firstRow.has(id)) firstRow.set(id, r.observations.row[i]);
    });
    let indices = r.subjects.map((_, i) => i);
    let blocks: InfluenceBlock[] | undefined;
    let dense: SubjectInfluenceData["dense"];
    if (m >= DENSE_FROM) {
      const candidates = indices.filter(beyond).sort((a, b) => cooks[b] - cooks[a] || a - b);
      const drawn = new Set(candidates.slice(0, DENSE_POINTS));
      indices = indices.filter((i) => drawn.has(i));
      blocks = blockMaxima(
        cooks,
        r.subjects.map((_, i) => i).filter((i) => !drawn.has(i)),
        m,
        BLOCKS,
      );
      dense = { total: m, beyond: candidates.length, drawn: drawn.size };
    }
    const rows: SubjectInfluenceRow[] = indices.map((i) => {
      const s = r.subjects[i];
      const rank = top.get(i) ?? null;
      return {
        subject: opts.withSubjectIds ? s.id : null,
        row: opts.withSubjectIds ? (firstRow.get(s.id) ?? null) : null,
        order: i + 1,
        cooks: round(s.cooksDistance),
        records: s.records,
        status: beyond(i) ? BEYOND : WITHIN,
        label: rank === null ? null : opts.withSubjectIds ? s.id : `rank ${rank}`,
        labelRank: rank,
      };
    });
    return {
      figure: "repeated_influence",
      ...repeatedBase(r, opts),
      // the points are subjects, not records
      n: m,
      subjects: m,
      threshold,
      defaultThreshold: !applied,
      primaryVisit: r.influence.primaryVisit,
      rows,
      ...(dense ? { dense, blocks } : {}),
    };
  },
  spec: subjectInfluenceSpec,
  words: {
    caption: "Cook's distance by subject, all of a subject's records together",
    shows:
      "each subject's Cook's distance (its records left out together) as a point in data order, with the threshold k/m as a dashed line and the most influential subjects numbered and listed beside the plot",
    healthy: "no subject far above the threshold line",
  },
  marked: (d) => markedSubjects(d.rows),
});
