/**
 * A GLM rerun's figures: every figure of the demo's flare-count model can be drawn, plots its
 * randomized quantile residuals (Dunn and Smyth 1996), and compiles as Vega-Lite.
 */
import { describe, expect, it } from "vitest";
import { compile } from "vega-lite";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { loadLockedTable, listLockedVersions } = await import("~/.server/datasets/catalog.server");
const { computeRerun } = await import("~/.server/reruns/reruns.server");
const { figureData } = await import("~/figures/registry");
const { rerunTable } = await import("~/.server/reruns/what-if.server");
const { figureSpec } = await import("~/figures/registry");
const { defaultChecks } = await import("~/engine/checks");

describe("figures of a generalized linear model", () => {
  it("draws every figure of a Poisson rerun from its quantile residuals", async () => {
    const seeded = await seedDemoStudy();
    if (!seeded.seeded) throw new Error(seeded.reason);
    const [v] = await listLockedVersions(seeded.studyId);
    const locked = await loadLockedTable(v.versionId);
    const model = {
      id: "m",
      position: 0,
      key: "flares",
      title: "Flare rate",
      datasetName: "adeff",
      spec: {
        population: [{ column: "fasfl", in: ["Y"] }],
        response: "flares",
        family: "poisson" as const,
        intercept: true,
        offset: "logexp",
        id: "subjid",
        treatment: "arm",
        terms: [
          { variable: "arm", categorical: true, reference: "Placebo" },
          { variable: "stratum" },
          { variable: "age" },
        ],
      },
      checks: defaultChecks(true, "poisson"),
      sensitivity: [],
    };
    const doc = computeRerun(
      model,
      locked.table,
      { variant: "planned" },
      { datasetSha256: locked.sha256, planVersionId: "p" },
    );
    expect(doc.result.kind).toBe("glm");
    const table = rerunTable(doc, locked.table);
    for (const figure of [
      "influence",
      "leverage_residual",
      "qq",
      "residuals_fitted",
      "spread_by_arm",
      "residuals_covariate",
      "partial_residuals",
    ] as const) {
      const data = figureData(doc, figure, { term: "age", withSubjectIds: false, table });
      expect(data.rows.length).toBe(doc.result.n);
      const spec = figureSpec(data, {});
      expect(() => compile(spec as Parameters<typeof compile>[0])).not.toThrow();
    }
    // the slopes figure picks a continuous covariate (stratum is categorical)
    const { figureModule } = await import("~/figures/registry");
    expect(figureModule("slopes_by_arm").defaultTerm?.(doc)).toBe("age");
    // each check's own figure draws for a count model too
    for (const figure of ["dfbetas", "gvif", "slopes_by_arm"] as const) {
      const data = figureData(doc, figure, { term: "age", withSubjectIds: false, table });
      expect(data.rows.length).toBeGreaterThan(0);
      expect(() => compile(figureSpec(data, {}) as Parameters<typeof compile>[0])).not.toThrow();
    }
    const fitted = figureData(doc, "residuals_fitted", { withSubjectIds: false, table });
    if (doc.result.kind !== "glm" || fitted.figure !== "residuals_fitted") throw new Error("unexpected");
    expect(fitted.rows[0].residual).toBeCloseTo(doc.result.observations.quantileResidual[0], 5);
  });
});
