/**
 * The coefficient table's caption names the scale of the estimates: the link scale for a
 * generalized linear model, the log hazard ratio for a Cox model (its coefficients are log
 * hazard ratios; Cox 1972).
 */
import { createElement } from "react";
import { renderToStaticMarkup } from "react-dom/server";
import { describe, expect, it } from "vitest";
import { CoefficientTable } from "~/components/rerun-results";

const rows = [
  { name: "TRTP: Active", estimate: -0.58, se: 0.15, statistic: -3.8, p: 0.0001, lower: -0.88, upper: -0.28 },
];

describe("coefficient table caption", () => {
  it("says the link scale for a generalized linear model and the log hazard ratio for a Cox model", () => {
    expect(
      renderToStaticMarkup(
        createElement(CoefficientTable, { rows, covarianceType: "model", df: 0, statisticName: "z" }),
      ),
    ).toMatch(/Wald z on the link scale/);
    const cox = renderToStaticMarkup(
      createElement(CoefficientTable, {
        rows,
        covarianceType: "model",
        df: 0,
        statisticName: "z",
        scale: "the scale of the log hazard ratio",
      }),
    );
    expect(cox).toMatch(/Wald z on the scale of the log hazard ratio/);
    expect(cox).not.toMatch(/link/);
  });
});
