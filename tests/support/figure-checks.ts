/**
 * What every diagnostic figure must have, checked with Vega-Lite's own compile(): marks, a title
 * with a subtitle saying what a healthy picture looks like, and at least two axis titles with
 * units in brackets. Returns the spec's title for further checks.
 */
import { expect } from "vitest";
import { compile, type TopLevelSpec } from "vega-lite";

export function titleOf(spec: TopLevelSpec): { text: string; subtitle: string[] } {
  return (spec as unknown as { title: { text: string; subtitle: string[] } }).title;
}

export function expectWellFormedFigure(spec: TopLevelSpec): { text: string; subtitle: string[] } {
  const vg = compile(spec).spec;
  expect(vg.marks?.length ?? 0).toBeGreaterThan(0);
  const t = titleOf(spec);
  expect(t.text.length).toBeGreaterThan(5);
  expect(t.subtitle.join(" ")).toMatch(/^Healthy: /);
  // the compiled axes carry titles with units in brackets
  const axes = (vg.axes ?? []).filter((a) => a.title !== undefined);
  expect(axes.length).toBeGreaterThanOrEqual(2);
  for (const a of axes) expect(String(a.title)).toMatch(/\(.+\)/);
  return t;
}
