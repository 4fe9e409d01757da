/**
 * Which subjects are unusual in their covariates, in their response, or in both? The plane of
 * leverage and deletion residual is divided by the plan's two thresholds into labelled zones,
 * each with its count of subjects; a subject's shape says which thresholds it exceeds; a ranked
 * list beside the plot names the subjects beyond a threshold, most influential (Cook's distance)
 * first.
 */
import type { TopLevelSpec } from "vega-lite";
import {
  asSpec,
  rankedList,
  cellsLayer,
  count,
  crowded,
  dataOf,
  denseLine,
  frame,
  NO_ARIA,
  PALETTE,
  SCHEMA,
  title,
  tooltip,
  zeroRule,
  type Json,
} from "./shared/look";
import { defineFigure } from "./shared/module";
import {
  appliedThreshold,
  cellsOf,
  denseSelection,
  drawnIndices,
  flaggedRows,
  labelOf,
  subjectsOf,
  topBy,
  who,
} from "./shared/source";
import { round } from "./shared/summaries";
import type {
  DensityCell,
  FigureBase,
  PointStatus,
  SpecOptions,
  SubjectRef,
  Threshold,
} from "./shared/types";

/** The zones of the plane, by the thresholds a subject exceeds. */
export const ZONES = [
  "within both thresholds",
  "high leverage",
  "large residual",
  "high leverage and large residual",
] as const;
export type Zone = (typeof ZONES)[number];

export interface LeverageResidualRow extends SubjectRef {
  leverage: number;
  deletionResidual: number;
  cooks: number;
  status: PointStatus;
  zone: Zone;
  label: string | null;
}
export interface LeverageResidualData extends FigureBase {
  figure: "leverage_residual";
  leverageThreshold: Threshold | null;
  residualThreshold: Threshold | null;
  rows: LeverageResidualRow[];
  /** Subjects in each zone (all of them, also in a dense figure). */
  zoneCounts: Record<Zone, number>;
  /** The subjects beyond a threshold, largest Cook's distance first (at most RANKED), for the list beside the plot. */
  ranked: { rank: number; label: string; zone: Zone; cooks: number }[];
  /** Dense figures: the subjects not drawn one by one. */
  cells?: DensityCell[];
}

/** How many subjects the list beside the plot names. */
const RANKED = 8;

const SHAPES: Record<Zone, string> = {
  "within both thresholds": "circle",
  "high leverage": "square",
  "large residual": "diamond",
  "high leverage and large residual": "triangle-up",
};
const COLOURS: Record<Zone, string> = {
  "within both thresholds": PALETTE.pending,
  "high leverage": PALETTE.accent,
  "large residual": PALETTE.accent,
  "high leverage and large residual": PALETTE.finding,
};

function zoneOf(leverage: number, residual: number, lev: Threshold | null, res: Threshold | null): Zone {
  const high = lev !== null && leverage > lev.value;
  const large = res !== null && Math.abs(residual) > res.value;
  return high && large
    ? "high leverage and large residual"
    : high
      ? "high leverage"
      : large
        ? "large residual"
        : "within both thresholds";
}

export function leverageResidualSpec(d: LeverageResidualData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const finite = (v: number) => Number.isFinite(v);
  const levs = [...d.rows.map((r) => r.leverage), ...(d.cells ?? []).map((c) => c.x1)].filter(finite);
  const ress = [
    ...d.rows.map((r) => r.deletionResidual),
    ...(d.cells ?? []).flatMap((c) => [c.y0, c.y1]),
  ].filter(finite);
  const lt = d.leverageThreshold?.value ?? null;
  const rt = d.residualThreshold?.value ?? null;
  const xMax = Math.max(lt ?? 0, ...levs) * 1.12 || 1;
  const yMax = Math.max(rt ?? 0, ...ress.map(Math.abs)) * 1.15 || 1;
  const x = {
    field: "leverage",
    type: "quantitative",
    title: "Leverage (hat value, no unit)",
    scale: { domain: [0, xMax], nice: false },
    axis: { tickCount: 6, format: ".2~r" },
  };
  const y = {
    field: "deletionResidual",
    type: "quantitative",
    title: "Deletion residual (units of σ̂₍ᵢ₎)",
    scale: { domain: [-yMax, yMax], nice: false },
  };
  const zoneRect = (x0: number, x1: number, y0: number, y1: number, fill: string): Json => ({
    data: { values: [{ x0, x1, y0, y1 }] },
    mark: { type: "rect", fill, opacity: 0.13, ...NO_ARIA },
    encoding: {
      x: { field: "x0", type: "quantitative", scale: x.scale },
      x2: { field: "x1" },
      y: { field: "y0", type: "quantitative", scale: y.scale },
      y2: { field: "y1" },
    },
  });
  const rects: Json[] = [];
  const labels: Json[] = [];
  const zoneLabel = (
    px: number,
    py: number,
    text: string,
    align: "left" | "right",
    baseline: "top" | "bottom",
  ): Json => ({
    data: { values: [{ px, py }] },
    mark: {
      type: "text",
      align,
      baseline,
      dx: align === "left" ? 4 : -4,
      dy: baseline === "top" ? 3 : -3,
      fontSize: 10,
      fontWeight: 600,
      color: PALETTE.inkSoft,
      ...NO_ARIA,
    },
    encoding: {
      x: { field: "px", type: "quantitative", scale: x.scale },
      y: { field: "py", type: "quantitative", scale: y.scale },
      text: { value: text },
    },
  });
  const c = d.zoneCounts;
  if (lt !== null) {
    rects.push(zoneRect(lt, xMax, rt !== null ? -rt : -yMax, rt ?? yMax, PALETTE.accent));
    labels.push(zoneLabel(xMax, 0, `High leverage: ${count(c["high leverage"])}`, "right", "bottom"));
  }
  if (rt !== null) {
    rects.push(
      zoneRect(0, lt ?? xMax, rt, yMax, PALETTE.accent),
      zoneRect(0, lt ?? xMax, -yMax, -rt, PALETTE.accent),
    );
    labels.push(zoneLabel(0, yMax, `Large residual: ${count(c["large residual"])}`, "left", "top"));
  }
  if (lt !== null && rt !== null) {
    rects.push(
      zoneRect(lt, xMax, rt, yMax, PALETTE.finding),
      zoneRect(lt, xMax, -yMax, -rt, PALETTE.finding),
    );
    labels.push(
      zoneLabel(xMax, yMax, `Both: ${count(c["high leverage and large residual"])}`, "right", "top"),
    );
  }
  const rules: Json[] = [];
  const rule = (axis: "x" | "y", v: number): Json => ({
    data: { values: [{}] },
    mark: { type: "rule", color: PALETTE.inkSoft, strokeDash: [5, 3], strokeWidth: 1, ...NO_ARIA },
    encoding: { [axis]: { datum: v } },
  });
  if (lt !== null) rules.push(rule("x", lt));
  if (rt !== null) rules.push(rule("y", rt), rule("y", -rt));
  const domain = [...ZONES];
  const legend = { title: "Subjects beyond" };
  const lines = [
    d.leverageThreshold ? `leverage ${d.leverageThreshold.label}` : null,
    d.residualThreshold
      ? `deletion residual ${d.residualThreshold.label.replace(/^\|t\|\s*>\s*/, "beyond ±")}`
      : null,
  ].filter((s): s is string => s !== null);
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Which subjects are unusual in covariates, in response, or both?",
      "every subject in the plain middle zone; none in the corner zones where both thresholds are passed.",
      [
        lines.length
          ? `Zones by the plan's thresholds: ${lines.join("; ")}. Shape: which thresholds a subject passes.`
          : "The plan sets no leverage or residual threshold.",
        ...denseLine(d, "shading counts the subjects in each cell"),
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      ...rects,
      ...(d.cells ? [cellsLayer(d.cells, "Leverage", "Deletion residual")] : []),
      zeroRule("y"),
      ...rules,
      ...labels,
      {
        mark: { type: "point", strokeWidth: 1.2, ...NO_ARIA },
        encoding: {
          x,
          y,
          shape: {
            field: "zone",
            type: "nominal",
            scale: { domain, range: domain.map((z) => SHAPES[z]) },
            legend,
          },
          color: {
            field: "zone",
            type: "nominal",
            scale: { domain, range: domain.map((z) => COLOURS[z]) },
            legend,
          },
          size: {
            field: "zone",
            type: "ordinal",
            scale: { domain, range: [crowded(d) ? 8 : 16, 44, 44, 56] },
            legend,
          },
          tooltip: tooltip(d, [
            { field: "leverage", title: "Leverage" },
            { field: "deletionResidual", title: "Deletion residual" },
            { field: "cooks", title: "Cook's distance" },
            { field: "zone", title: "Zone", type: "nominal" },
          ]),
        },
      },
      // the ranked list, beside the plot on the right (the plot narrows to make room)
      rankedList(
        ["Beyond a threshold,", "most influential first:"],
        d.ranked.map((r) => {
          const zone = r.zone === "high leverage and large residual" ? "both" : r.zone;
          return d.withSubjectIds ? `${r.label} (${zone})` : zone;
        }),
        "No subject beyond a threshold.",
      ),
    ],
  });
}

export const leverageResidual = defineFigure<LeverageResidualData>({
  key: "leverage_residual",
  checks: ["leverage", "deletion_residual"],
  data(source, opts) {
    const { r, obs, n, b, statusOf } = subjectsOf(source, "leverage_residual", opts);
    const leverageThreshold = appliedThreshold(source, "leverage");
    const residualThreshold = appliedThreshold(source, "deletion_residual");
    const keys = flaggedRows(source, ["leverage", "deletion_residual", "cooks_distance"]);
    const zones = obs.row.map((_, i) =>
      zoneOf(obs.leverage[i], obs.studentizedExternal[i], leverageThreshold, residualThreshold),
    );
    const zoneCounts = Object.fromEntries(ZONES.map((z) => [z, 0])) as Record<Zone, number>;
    for (const z of zones) zoneCounts[z]++;
    const top = topBy(obs.cooksDistance, RANKED, (i) => zones[i] !== "within both thresholds");
    const ranked = [...top]
      .sort((a, c) => a[1] - c[1])
      .map(([i, rank]) => ({
        rank,
        label: labelOf(r, i, opts.withSubjectIds, top),
        zone: zones[i],
        cooks: round(obs.cooksDistance[i]),
      }));
    const dense = denseSelection(r, keys);
    const rows = drawnIndices(n, dense).map((i) => ({
      ...who(r, i, opts.withSubjectIds),
      leverage: round(obs.leverage[i]),
      deletionResidual: round(obs.studentizedExternal[i]),
      cooks: round(obs.cooksDistance[i]),
      status: statusOf(i, keys),
      zone: zones[i],
      label: top.has(i) ? labelOf(r, i, opts.withSubjectIds, top) : null,
    }));
    return {
      figure: "leverage_residual",
      ...b,
      leverageThreshold,
      residualThreshold,
      rows,
      zoneCounts,
      ranked,
      ...(dense
        ? { dense: dense.summary, cells: cellsOf(obs.leverage, obs.studentizedExternal, dense) }
        : {}),
    };
  },
  spec: leverageResidualSpec,
  words: {
    caption: "Leverage and deletion residual zones",
    shows:
      "each subject's deletion residual against its leverage, in zones divided by the planned thresholds with the count of subjects in each, and a ranked list of the subjects beyond a threshold",
    healthy: "no subject in the zone beyond both thresholds",
  },
  marked(d) {
    const c = d.zoneCounts;
    return `High leverage only: ${c["high leverage"]}; large residual only: ${c["large residual"]}; both: ${c["high leverage and large residual"]} subjects.`;
  },
});
