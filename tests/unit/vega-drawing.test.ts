/**
 * The figure worker draws with part of Vega (app/components/figures/vega-drawing.ts): every
 * transform the results page's figures use must be registered there, or the worker's drawing
 * fails and the page falls back to the whole of Vega. Built on the demo study's primary model
 * (as tests/unit/figure-specs.test.ts); the figures compiled by Vega-Lite's own compile(). No
 * outside source: it checks the code against itself.
 */
import { describe, expect, it } from "vitest";
import type { TopLevelSpec } from "vega-lite";
import type { FigureKey } from "~/engine/checks";

// the worker's part of Vega first, before anything imports the whole of it (vega-lite does)
await import("~/components/figures/vega-drawing");
const { transforms } = (await import("vega-dataflow")) as { transforms: Record<string, unknown> };
const registered = new Set(Object.keys(transforms).map((k) => k.toLowerCase()));

const { compile } = await import("vega-lite");
const { generateDemoDataset } = await import("~/.server/demo/demo-dataset");
const { figureData, figureSpec, FIGURE_KEYS } = await import("~/figures/registry");
const { FigureUnavailableError } = await import("~/figures/shared/source");
const { demoPrimaryRerun } = await import("../support/demo-primary-rerun");

const ds = generateDemoDataset();
const columns: Record<string, string[]> = {};
for (const c of ds.columns) columns[c] = ds.rows.map((r) => r[c]);
const { doc, table } = demoPrimaryRerun(columns);

/** Every transform type a compiled Vega specification names, in its data and its (nested) marks. */
function transformTypes(node: unknown, out = new Set<string>()): Set<string> {
  if (Array.isArray(node)) for (const n of node) transformTypes(n, out);
  else if (node && typeof node === "object") {
    for (const [k, v] of Object.entries(node)) {
      if (k === "transform" && Array.isArray(v))
        for (const t of v as { type?: unknown }[])
          if (typeof t.type === "string") out.add(t.type.toLowerCase());
      transformTypes(v, out);
    }
  }
  return out;
}

describe("the figure worker's part of Vega", () => {
  it("registers every transform of the linear model's figures, and leaves out Vega's geographic and layout extras", () => {
    const drawn: FigureKey[] = [];
    const seen = new Set<string>();
    for (const figure of FIGURE_KEYS) {
      for (const term of [undefined, "base"]) {
        let spec: TopLevelSpec;
        try {
          spec = figureSpec(figureData(doc, figure, { term, withSubjectIds: true, table }), {
            width: "container",
            height: "container",
            inlineRows: false,
          });
        } catch (e) {
          if (e instanceof FigureUnavailableError) continue;
          throw e;
        }
        drawn.push(figure);
        for (const type of transformTypes(compile(spec).spec)) {
          seen.add(type);
          expect(registered, `${figure}: transform "${type}"`).toContain(type);
        }
      }
    }
    expect(new Set(drawn).size).toBeGreaterThanOrEqual(8);
    // the ranked subjects' labels filter their rows (look.ts rankMarks); Vega-Lite adds more
    expect(seen).toContain("filter");
    for (const extra of ["geoshape", "force", "treemap", "wordcloud", "voronoi", "loess"])
      expect(registered).not.toContain(extra);
  });
});
