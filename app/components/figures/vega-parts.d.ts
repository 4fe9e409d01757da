// Vega's own packages that ship no types: vega-drawing.ts gives their exports Vega's types.
declare module "vega-dataflow" {
  export const transforms: Record<string, unknown>;
}
declare module "vega-encode";
declare module "vega-parser" {
  export const parse: unknown;
}
declare module "vega-transforms";
declare module "vega-view" {
  export const View: unknown;
}
declare module "vega-view-transforms";
