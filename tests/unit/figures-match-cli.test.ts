/**
 * The figures on the results page show the same numbers the headless rerun command prints for
 * the same data: Cook's distance, leverage, residuals and fitted values per subject.
 */
import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { generateDemoDataset } = await import("~/.server/demo/demo-dataset");
const { loadLockedTable, listLockedVersions } = await import("~/.server/datasets/catalog.server");
const { computeRerun } = await import("~/.server/reruns/reruns.server");
const { figureData } = await import("~/figures/registry");
const { rerunTable } = await import("~/.server/reruns/what-if.server");
const { defaultChecks } = await import("~/engine/checks");

const spec = {
  response: "chg",
  family: "gaussian" as const,
  intercept: true,
  id: "subjid",
  treatment: "arm",
  terms: [
    { variable: "arm", categorical: true, reference: "Placebo" },
    { variable: "base" },
    { variable: "stratum" },
    { variable: "region" },
    { variable: "sex" },
    { variable: "age" },
  ],
};

describe("figures and the headless command agree", () => {
  it("per subject, to the digits the figures keep (6 significant)", async () => {
    const seeded = await seedDemoStudy();
    if (!seeded.seeded) throw new Error(seeded.reason);
    const [v] = await listLockedVersions(seeded.studyId);
    const locked = await loadLockedTable(v.versionId);
    const model = {
      id: "m",
      position: 0,
      key: "primary",
      title: "Primary",
      datasetName: "adeff",
      spec: { ...spec, population: [{ column: "fasfl", in: ["Y"] }] },
      checks: defaultChecks(true),
      sensitivity: [],
    };
    const doc = computeRerun(
      model,
      locked.table,
      { variant: "planned" },
      { datasetSha256: locked.sha256, planVersionId: "p" },
    );
    const table = rerunTable(doc, locked.table);
    const influence = figureData(doc, "influence", { withSubjectIds: true, table });
    const fitted = figureData(doc, "residuals_fitted", { withSubjectIds: true, table });

    // The same population, written as a file for the command.
    const { columns, rows } = generateDemoDataset();
    const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-cli-"));
    const csv = [
      columns.join(","),
      ...rows.filter((r) => r.fasfl === "Y").map((r) => columns.map((c) => r[c]).join(",")),
    ].join("\n");
    writeFileSync(path.join(dir, "fas.csv"), `${csv}\n`);
    writeFileSync(path.join(dir, "model.json"), JSON.stringify(spec));
    const out = JSON.parse(
      execFileSync(
        process.execPath,
        [
          path.resolve("node_modules/tsx/dist/cli.mjs"),
          "app/cli.ts",
          "fit",
          "--data",
          path.join(dir, "fas.csv"),
          "--model",
          path.join(dir, "model.json"),
        ],
        { encoding: "utf8" },
      ),
    ) as {
      n: number;
      observations: {
        id: string;
        fitted: number;
        residual: number;
        leverage: number;
        cooksDistance: number;
      }[];
    };
    expect(out.n).toBe(doc.result.n);
    const cli = new Map(out.observations.map((o) => [o.id, o]));
    const close = (a: number, b: number) =>
      expect(Math.abs(a - b)).toBeLessThanOrEqual(1e-5 * Math.max(1, Math.abs(b)));
    if (influence.figure !== "influence" || fitted.figure !== "residuals_fitted")
      throw new Error("unexpected figure data");
    for (const row of influence.rows) {
      const o = cli.get(row.subject!)!;
      close(row.cooks, o.cooksDistance);
      close(row.leverage, o.leverage);
    }
    for (const row of fitted.rows) {
      const o = cli.get(row.subject!)!;
      close(row.fitted, o.fitted);
      close(row.residual, o.residual);
    }
  });
});
