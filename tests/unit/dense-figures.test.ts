// Figures of many subjects: from DENSE_FROM subjects a figure sends a density (grid counts, box
// summaries, block maxima) and only the most influential subjects beyond a threshold one by one.
// Checked on an invented 6 000-subject version of the demo model (the demo generator run with
// consecutive seeds): nothing is lost (every subject is in a cell or drawn), the subjects drawn
// are the right ones, and the box summaries are R's quartiles (quantile type 7, R's default).
import { execFileSync, spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { compile } from "vega-lite";
import { generateDemoDataset } from "~/.server/demo/demo-dataset";
import { axisBins, boxSummaries, densityCells, qqKept } from "~/figures/shared/summaries";
import type { RerunDocument } from "~/.server/reruns/reruns.server";
import { figureData, figureSpec } from "~/figures/registry";
import { BEYOND, DENSE_FROM, DENSE_POINTS } from "~/figures/shared/types";
import type { InfluenceData } from "~/figures/cooks-distance";
import type { LeverageResidualData } from "~/figures/leverage-residual";
import type { PartialResidualsData } from "~/figures/partial-residuals";
import type { QqData } from "~/figures/qq";
import type { ResidualsFittedData } from "~/figures/residuals-fitted";
import type { SpreadByArmData } from "~/figures/spread-by-arm";
import type { SlopesByArmData } from "~/figures/slopes-by-arm";
import { demoPrimaryRerun } from "../support/demo-primary-rerun";

const TARGET = 6_000;

function largeDoc(): RerunDocument {
  const first = generateDemoDataset(1);
  const columns: Record<string, string[]> = Object.fromEntries(first.columns.map((c) => [c, [] as string[]]));
  let n = 0;
  for (let seed = 1; n < TARGET; seed++) {
    for (const row of generateDemoDataset(seed).rows) {
      if (n >= TARGET) break;
      for (const c of first.columns) columns[c].push(c === "subjid" ? `S${seed}-${row[c]}` : row[c]);
      n++;
    }
  }
  const { doc, table } = demoPrimaryRerun(columns);
  return { ...doc, table } as RerunDocument & { table: typeof table };
}

const doc = largeDoc() as RerunDocument & {
  table: { columns: Record<string, string[]>; rowNumbers: number[] };
};
const table = doc.table;
const r =
  doc.result.kind === "linear"
    ? doc.result
    : (() => {
        throw new Error("the dense test document is a linear rerun");
      })();
const opts = { withSubjectIds: true, table };

/** Data rows flagged by any influence check: what the scatter figures mark as beyond a threshold. */
const influential = new Set(
  doc.checks
    .filter((c) =>
      ["cooks_distance", "leverage", "deletion_residual", "dfbetas_treatment", "dffits"].includes(c.key),
    )
    .flatMap((c) => (c.flagged ?? []).map((f) => f.row)),
);
const cooksByRow = new Map(r.observations.row.map((row, i) => [row, r.observations.cooksDistance[i]]));

describe("figures of many subjects", () => {
  it("the test model is dense and has more subjects beyond a threshold than are drawn", () => {
    expect(r.n).toBeGreaterThanOrEqual(DENSE_FROM);
    expect(influential.size).toBeGreaterThan(DENSE_POINTS);
  });

  it("residuals against fitted: every subject is either in a cell or drawn, and the drawn ones have the largest Cook's distances", () => {
    const d = figureData(doc, "residuals_fitted", opts) as ResidualsFittedData;
    expect(d.dense).toEqual({ total: r.n, beyond: influential.size, drawn: DENSE_POINTS });
    expect(d.rows).toHaveLength(DENSE_POINTS);
    expect(d.rows.every((p) => p.status === BEYOND)).toBe(true);
    const inCells = (d.cells ?? []).reduce((s, c) => s + c.count, 0);
    expect(inCells + d.rows.length).toBe(r.n);
    // nobody left in the cells beyond a threshold has a larger Cook's distance than a subject drawn
    const drawn = new Set(d.rows.map((p) => p.row));
    const smallestDrawn = Math.min(...d.rows.map((p) => cooksByRow.get(p.row!)!));
    const largestLeft = Math.max(
      ...[...influential].filter((row) => !drawn.has(row)).map((row) => cooksByRow.get(row)!),
    );
    expect(smallestDrawn).toBeGreaterThanOrEqual(largestLeft);
    // the smoother is of every subject, not only the drawn ones
    expect(d.smooth.length).toBeGreaterThan(50);
  });

  it("every drawn point falls inside the grid's cells' span", () => {
    const d = figureData(doc, "leverage_residual", opts) as LeverageResidualData;
    const cells = d.cells ?? [];
    const x0 = Math.min(...cells.map((c) => c.x0));
    const x1 = Math.max(...cells.map((c) => c.x1));
    for (const c of cells) {
      expect(c.x1).toBeGreaterThan(c.x0);
      expect(c.y1).toBeGreaterThan(c.y0);
      expect(c.count).toBeGreaterThan(0);
    }
    const leverage = r.observations.leverage;
    expect(x0).toBeLessThanOrEqual(Math.min(...leverage));
    expect(x1).toBeGreaterThanOrEqual(
      Math.max(...leverage.filter((_, i) => !d.rows.some((p) => p.row === r.observations.row[i]))) - 1e-12,
    );
  });

  it("influence: the block maxima and the drawn subjects keep the largest Cook's distance, and the labelled subjects are drawn", () => {
    const d = figureData(doc, "influence", opts) as InfluenceData;
    const max = Math.max(...r.observations.cooksDistance);
    const shown = Math.max(...(d.blocks ?? []).map((b) => b.cooks), ...d.rows.map((p) => p.cooks));
    expect(shown).toBeCloseTo(max, 5);
    expect(d.rows.filter((p) => p.label !== null)).toHaveLength(3);
    // blocks tile 1..n in order
    const blocks = d.blocks ?? [];
    expect(blocks[0].from).toBeGreaterThanOrEqual(1);
    expect(blocks[blocks.length - 1].to).toBeLessThanOrEqual(r.n);
    for (let k = 1; k < blocks.length; k++) expect(blocks[k].from).toBeGreaterThan(blocks[k - 1].to);
  });

  it("Q-Q plot: keeps both tails whole, thins the middle evenly and keeps the subjects drawn elsewhere", () => {
    const d = figureData(doc, "qq", opts) as QqData;
    expect(d.thinning?.tail).toBe(100);
    const sorted = [...r.observations.studentizedInternal].filter(Number.isFinite).sort((a, b) => a - b);
    expect(d.rows[0].sample).toBeCloseTo(sorted[0], 4);
    expect(d.rows[99].sample).toBeCloseTo(sorted[99], 4);
    expect(d.rows[d.rows.length - 1].sample).toBeCloseTo(sorted[sorted.length - 1], 4);
    for (let k = 1; k < d.rows.length; k++)
      expect(d.rows[k].theoretical).toBeGreaterThan(d.rows[k - 1].theoretical);
    const fitted = figureData(doc, "residuals_fitted", opts) as ResidualsFittedData;
    const qqRows = new Set(d.rows.map((p) => p.row));
    for (const p of fitted.rows) expect(qqRows.has(p.row)).toBe(true);
    expect(d.rows.length).toBeLessThan(1_000);
  });

  it("partial residuals: the fitted line runs from the smallest to the largest value of the covariate", () => {
    const d = figureData(doc, "partial_residuals", { ...opts, term: "age" }) as PartialResidualsData;
    const ages = r.observations.row.map((row) => Number(table.columns.age[table.rowNumbers.indexOf(row)]));
    expect(d.fittedLine.map((p) => p.x)).toEqual([Math.min(...ages), Math.max(...ages)]);
    // the component is the coefficient times the centred covariate: the line's slope is the estimate
    const [a, b] = d.fittedLine;
    expect((b.component - a.component) / (b.x - a.x)).toBeCloseTo(d.coefficient, 4);
  });

  it("spread by arm: the boxes summarise every subject", () => {
    const d = figureData(doc, "spread_by_arm", opts) as SpreadByArmData;
    expect(d.boxes.reduce((s, b) => s + b.n, 0)).toBe(r.n);
    expect(d.boxes.map((b) => b.level)).toEqual(d.levels);
  });

  it("slopes by arm: every subject is in a cell or drawn, and the arms' lines are fitted to every subject", () => {
    const d = figureData(doc, "slopes_by_arm", { ...opts, term: "base" }) as SlopesByArmData;
    const all = figureData({ ...doc, result: { ...r, n: DENSE_FROM - 1 } }, "slopes_by_arm", {
      ...opts,
      term: "base",
    }) as SlopesByArmData;
    expect(all.dense).toBeUndefined();
    expect(all.rows.length).toBe(r.n);
    expect(d.rows.length + (d.cells ?? []).reduce((s, c) => s + c.count, 0)).toBe(r.n);
    expect(d.rows.length).toBeLessThanOrEqual(DENSE_POINTS);
    expect(d.rows.every((p) => p.status === BEYOND)).toBe(true);
    expect(d.slopes).toEqual(all.slopes);
    expect(d.common).toEqual(all.common);
  });

  it("every dense specification compiles, says what is drawn, and sends a small answer", () => {
    for (const [figure, term] of [
      ["residuals_fitted"],
      ["residuals_covariate", "base"],
      ["residuals_covariate", "region"],
      ["partial_residuals", "age"],
      ["qq"],
      ["influence"],
      ["leverage_residual"],
      ["spread_by_arm"],
      ["slopes_by_arm", "base"],
    ] as const) {
      const d = figureData(doc, figure, { ...opts, term });
      const spec = figureSpec(d);
      expect(compile(spec).spec.marks?.length ?? 0).toBeGreaterThan(0);
      const subtitle = (spec as unknown as { title: { subtitle: string[] } }).title.subtitle.join(" ");
      expect(subtitle).toContain(`${r.n.toLocaleString("en-GB")} subjects`);
      // a few hundred marks rather than thousands: about 100 kB of JSON instead of megabytes
      expect(JSON.stringify(d).length).toBeLessThan(150_000);
    }
  });
});

describe("the summaries", () => {
  it("bins whole numbers on whole-number edges, so no bin gains a value from where its edges fall", () => {
    const ages = Array.from({ length: 68 }, (_, k) => 18 + k);
    const bins = axisBins(ages, 48);
    expect(bins).toEqual({ origin: 17.5, width: 2, count: 34 });
    const cells = densityCells(
      ages,
      ages.map(() => 0),
      ages.keys(),
      { x: bins, y: axisBins([0], 1) },
    );
    expect(cells.every((c) => c.count === 2)).toBe(true);
  });

  it("counts each point once, in the cell that holds it", () => {
    const x = [0, 0.5, 1, 1, 2.99, 3];
    const y = [0, 0, 0, 1, 1, 1];
    const cells = densityCells(x, y, x.keys(), {
      x: axisBins(
        x.map((v) => v + 0.001),
        3,
      ),
      y: axisBins(y, 1),
    });
    expect(cells.reduce((s, c) => s + c.count, 0)).toBe(6);
  });

  it("keeps the tails, every step-th position between them, and the positions asked for", () => {
    const { kept, step } = qqKept(1000, 10, 98, new Set([500, 501]));
    expect(step).toBe(10);
    expect(kept.slice(0, 10)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    expect(kept).toContain(990);
    expect(kept).toContain(501);
    expect(kept).toContain(20);
    expect(kept).not.toContain(21);
  });

  const hasR = spawnSync("Rscript", ["--version"], { stdio: "ignore" }).status === 0;
  it.skipIf(!hasR)(
    "box summaries are R's quartiles (quantile, type 7) with whiskers to the last values within 1.5 × IQR",
    () => {
      const d = figureData(doc, "spread_by_arm", opts) as SpreadByArmData;
      const position = new Map(table.rowNumbers.map((row, k) => [row, k]));
      const arms = table.columns.arm;
      const armOf = (row: number) => arms[position.get(row)!];
      const residuals = r.observations.residual;
      const levels = d.levels;
      const ours = boxSummaries(levels, r.observations.row.map(armOf), residuals);
      const script = `
      d <- read.csv(file("stdin"))
      for (l in strsplit(Sys.getenv("LEVELS"), "|", fixed = TRUE)[[1]]) {
        x <- d$residual[d$arm == l]
        q <- quantile(x, c(0.25, 0.5, 0.75), type = 7, names = FALSE)
        iqr <- q[3] - q[1]
        cat(sprintf("%.10g %.10g %.10g %.10g %.10g %d\\n", q[1], q[2], q[3], min(x[x >= q[1] - 1.5 * iqr]), max(x[x <= q[3] + 1.5 * iqr]), length(x)))
      }`;
      const csv = `arm,residual\n${r.observations.row.map((row, i) => `"${armOf(row)}",${residuals[i].toPrecision(17)}`).join("\n")}\n`;
      const out = execFileSync("Rscript", ["-e", script], {
        input: csv,
        encoding: "utf8",
        env: { ...process.env, LEVELS: levels.join("|") },
      });
      const fromR = out
        .trim()
        .split("\n")
        .map((line) => line.split(" ").map(Number));
      expect(fromR).toHaveLength(levels.length);
      ours.forEach((b, k) => {
        const [q1, median, q3, lower, upper, n] = fromR[k];
        expect(b.n).toBe(n);
        // six significant digits are kept for drawing
        for (const [got, want] of [
          [b.q1, q1],
          [b.median, median],
          [b.q3, q3],
          [b.lower, lower],
          [b.upper, upper],
        ])
          expect(Math.abs(got - want)).toBeLessThanOrEqual(5e-6 * Math.max(1, Math.abs(want)));
      });
    },
  );
});
