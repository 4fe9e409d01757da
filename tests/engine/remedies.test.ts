// Remedies return full results beside the planned fit; their numbers follow from the primary
// definitions (weights column = prior weights; robust = HC covariance in the coefficient table).
import { describe, expect, it } from "vitest";
import {
  fitModel,
  fitWithEstimatedVariance,
  fitWithRobustErrors,
  fitWithWeightsColumn,
  toDataTable,
  parseModelSpec,
} from "~/engine";
import { readCsvText } from "~/engine-io/read-csv";
import { readFileSync } from "node:fs";
import { join } from "node:path";

const REF = join(import.meta.dirname, "..", "reference");
const table = toDataTable(readCsvText(readFileSync(join(REF, "data", "trial-ancova.csv"), "utf8")));
const spec = parseModelSpec(JSON.parse(readFileSync(join(REF, "models", "trial-ancova.json"), "utf8")));

describe("remedies", () => {
  const planned = fitModel(spec, table);

  it("weighted fit with a weights column equals the model with those prior weights", () => {
    const weighted = fitWithWeightsColumn(spec, table, "w");
    const direct = fitModel({ ...spec, weights: "w" }, table);
    expect(weighted.method.kind).toBe("weighted");
    expect(weighted.coefficients).toEqual(direct.coefficients);
  });

  it("robust errors put the HC3 standard errors in the coefficient table", () => {
    const robust = fitWithRobustErrors(spec, table, "HC3");
    expect(robust.coefficients.map((c) => c.se)).toEqual(planned.robustSE.HC3);
    expect(robust.coefficients.map((c) => c.estimate)).toEqual(planned.coefficients.map((c) => c.estimate));
  });

  it("estimated variance per arm and from the fitted values give full weighted results", () => {
    for (const model of ["treatment", "fitted"] as const) {
      const r = fitWithEstimatedVariance(spec, table, model);
      expect(r.method.kind).toBe("estimated-variance");
      expect(r.n).toBe(planned.n);
      const w = r.observations.weight as number[];
      expect(w.reduce((s, v) => s + v, 0) / w.length).toBeCloseTo(1, 12);
      expect(r.adjustedMeans?.length).toBe(3);
    }
    // per-arm weights are constant within an arm and larger where the residual spread is smaller
    const perArm = fitWithEstimatedVariance(spec, table, "treatment");
    const armOf = perArm.observations.row.map((row) => table.columns.arm[row - 1]);
    const wOf = (arm: string) => (perArm.observations.weight as number[])[armOf.indexOf(arm)];
    expect(wOf("Placebo")).toBeGreaterThan(wOf("High dose"));
  });

  it("Q-Q reading is one of the plain-words shapes", () => {
    expect([
      "close to normal",
      "one extreme residual",
      "right-skewed",
      "left-skewed",
      "heavier tails",
      "lighter tails",
    ]).toContain(planned.qqShape.reading);
  });
});
