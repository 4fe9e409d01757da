/**
 * Binned residual plot (Gelman and Hill 2007, Data Analysis Using Regression and
 * Multilevel/Hierarchical Models, section 5.6) of a binomial model: do the observed proportions
 * follow the fitted probabilities across their range?
 */
import type { TopLevelSpec } from "vega-lite";
import { asSpec, dataOf, frame, NO_ARIA, PALETTE, SCHEMA, title, zeroRule } from "./shared/look";
import { defineFigure } from "./shared/module";
import { base, binomialResult, eventOf, FigureUnavailableError, modelResult } from "./shared/source";
import { round } from "./shared/summaries";
import { INSIDE_BAND, OUTSIDE_BAND, type BinStatus, type FigureBase, type SpecOptions } from "./shared/types";

/** One bin of subjects of similar fitted probability (Gelman and Hill 2007, section 5.6). */
export interface BinnedResidualRow {
  /** 1-based, in order of fitted probability. */
  bin: number;
  /** Subjects in the bin. */
  n: number;
  meanFitted: number;
  /** Mean of y − fitted probability: the observed minus the predicted proportion of events. */
  meanResidual: number;
  /** Two standard errors of the mean residual under the model, 2·√(p̄(1 − p̄)/n); the band is ±bound. */
  bound: number;
  /** −bound, the band's lower edge. */
  lower: number;
  status: BinStatus;
}
export interface BinnedResidualsData extends FigureBase {
  figure: "binned_residuals";
  /** The event in words, e.g. "resp = 1". */
  event: string;
  rows: BinnedResidualRow[];
}

/**
 * Binned residual plot (Gelman and Hill 2007, Data Analysis Using Regression and
 * Multilevel/Hierarchical Models, section 5.6): the mean residual y − p̂ of each bin of subjects
 * with similar fitted probabilities, against the bin's mean fitted probability, inside a band of
 * ±2 standard errors. Bins outside their band are filled triangles in the finding colour, the
 * others open circles.
 */
export function binnedResidualsSpec(d: BinnedResidualsData, opts: SpecOptions = {}): TopLevelSpec {
  const width = opts.width ?? 560;
  const bins = d.rows.length;
  const outside = d.rows.filter((r) => r.status === OUTSIDE_BAND).length;
  const sizes = d.rows.map((r) => r.n);
  const perBin = bins
    ? Math.min(...sizes) === Math.max(...sizes)
      ? `${sizes[0]}`
      : `${Math.min(...sizes)} or ${Math.max(...sizes)}`
    : "0";
  // about one bin in twenty lies outside its band by chance alone when the model holds
  const expected =
    0.05 * bins < 1
      ? "fewer than one expected by chance"
      : `about ${Math.round(0.05 * bins)} expected by chance`;
  const x = {
    field: "meanFitted",
    type: "quantitative",
    title: `Mean fitted probability of ${d.event} in the bin (probability, 0 to 1)`,
    scale: { zero: false },
    axis: { tickCount: 6 },
  };
  // short enough to fit beside the plot's height: a longer rotated title pushes the plot apart
  const yTitle = "Mean of observed − fitted (proportion)";
  const band = (field: string) => ({
    mark: { type: "line", color: PALETTE.inkSoft, strokeWidth: 1, ...NO_ARIA },
    encoding: { x, y: { field, type: "quantitative", title: yTitle } },
  });
  const domain = [INSIDE_BAND, OUTSIDE_BAND];
  const legend = { title: "Bins" };
  return asSpec({
    $schema: SCHEMA,
    ...frame(d, opts),
    title: title(
      "Do observed proportions follow the fitted probabilities?",
      "about 95% of bins inside the band, no pattern (no curve, no run of bins on one side of zero).",
      [
        `${outside} of ${bins} bins lie outside their band (${expected}).`,
        // the formula has no spaces, so it never breaks across lines
        `Bins of ${perBin} subjects by fitted probability. Grey band: ±2 standard errors, SE² = p̄(1−p̄)/n. Dashed: zero.`,
        ...(d.note ? [d.note] : []),
      ],
      width,
    ),
    ...dataOf(d.rows, opts),
    layer: [
      {
        mark: { type: "area", color: PALETTE.rule, opacity: 0.45, ...NO_ARIA },
        encoding: { x, y: { field: "lower", type: "quantitative", title: yTitle }, y2: { field: "bound" } },
      },
      band("bound"),
      band("lower"),
      zeroRule("y"),
      {
        mark: { type: "point", strokeWidth: 1.4, size: 56, ...NO_ARIA },
        encoding: {
          x,
          y: { field: "meanResidual", type: "quantitative", title: yTitle },
          shape: {
            field: "status",
            type: "nominal",
            scale: { domain, range: ["circle", "triangle-up"] },
            legend,
          },
          color: {
            field: "status",
            type: "nominal",
            scale: { domain, range: [PALETTE.ink, PALETTE.finding] },
            legend,
          },
          // the triangles are filled, so the bins outside stand out in shape and weight as well as colour
          fill: {
            field: "status",
            type: "nominal",
            scale: { domain, range: ["transparent", PALETTE.finding] },
            legend,
          },
          tooltip: [
            { field: "bin", type: "quantitative", title: "Bin", format: "d" },
            { field: "n", type: "quantitative", title: "Subjects", format: "d" },
            { field: "meanFitted", type: "quantitative", title: "Mean fitted probability", format: ".4~g" },
            { field: "meanResidual", type: "quantitative", title: "Mean residual", format: ".4~g" },
            { field: "bound", type: "quantitative", title: "Band, ±", format: ".4~g" },
            { field: "status", type: "nominal", title: "Status" },
          ],
        },
      },
    ],
  });
}

export const binnedResiduals = defineFigure<BinnedResidualsData>({
  key: "binned_residuals",
  checks: [],
  data(source, opts) {
    const r = modelResult(source, "binned_residuals");
    const g = binomialResult(r, "the binned residual plot");
    if (!g.binnedResiduals?.length)
      throw new FigureUnavailableError(
        "the rerun stored no binned residuals; rerun it with the current engine",
      );
    // a bin is outside its band when |mean residual| exceeds 2 standard errors (Gelman and Hill 2007, section 5.6)
    const rows: BinnedResidualRow[] = g.binnedResiduals.map((bin, k) => ({
      bin: k + 1,
      n: bin.n,
      meanFitted: round(bin.meanFitted),
      meanResidual: round(bin.meanResidual),
      bound: round(bin.bound),
      lower: round(-bin.bound),
      status: Math.abs(bin.meanResidual) > bin.bound ? OUTSIDE_BAND : INSIDE_BAND,
    }));
    return { figure: "binned_residuals", ...base(g, opts), withSubjectIds: false, event: eventOf(g), rows };
  },
  spec: binnedResidualsSpec,
  words: {
    caption: "Binned residuals",
    shows:
      "the mean residual (observed minus fitted probability) of each bin of subjects with similar fitted probabilities against the bin's mean fitted probability, inside a band of two standard errors",
    healthy: "about 95% of the bins inside the band and no pattern",
  },
  marked(d) {
    const outside = d.rows.filter((row) => row.status === OUTSIDE_BAND).length;
    return `${outside} of ${d.rows.length} bins lie outside their band and are drawn as filled triangles.`;
  },
});
