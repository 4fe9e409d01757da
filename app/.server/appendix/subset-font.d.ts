/** Types for the subset-font package (it ships none): harfbuzz's hb-subset compiled to wasm. */
declare module "subset-font" {
  interface SubsetOptions {
    targetFormat?: "sfnt" | "truetype" | "woff" | "woff2";
    preserveNameIds?: number[];
    variationAxes?: Record<string, number | { min: number; max: number; default?: number }>;
  }
  export default function subsetFont(font: Buffer, text: string, options?: SubsetOptions): Promise<Buffer>;
}
