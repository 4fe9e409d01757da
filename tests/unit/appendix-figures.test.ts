/**
 * Figures rendered on the server keep their text: Vega's SVG carries <text> elements in Noto
 * Sans, and resvg, given only the shipped TTF files, draws their glyphs. The check is shown to
 * bite: the same SVG rasterised without any font loses the title's ink.
 */
import { Resvg } from "@resvg/resvg-js";
import { describe, expect, it } from "vitest";
import { resvgOptions, specToSvg, svgToPng } from "~/.server/appendix/figures.server";
import { forestSpec } from "~/figures/forest";

/** Dark pixels (ink) in the top `rows` rows of an RGBA image on a light background. */
function inkInTopRows(svg: string, rows: number, withFonts: boolean): number {
  const options = withFonts
    ? resvgOptions(1)
    : { fitTo: { mode: "zoom" as const, value: 1 }, font: { loadSystemFonts: false, fontFiles: [] } };
  const image = new Resvg(svg, options).render();
  const px = image.pixels;
  let ink = 0;
  for (let y = 0; y < Math.min(rows, image.height); y++) {
    for (let x = 0; x < image.width; x++) {
      const i = (y * image.width + x) * 4;
      if (px[i + 3] > 128 && px[i] + px[i + 1] + px[i + 2] < 300) ink++;
    }
  }
  return ink;
}

describe("server-rendered figures", () => {
  const spec = forestSpec(
    [
      {
        label: "Primary analysis as planned",
        estimate: -9.67,
        lower: -12.13,
        upper: -7.21,
        prespecified: true,
        primary: true,
      },
      {
        label: "Robust (HC3) standard errors",
        estimate: -9.67,
        lower: -12.15,
        upper: -7.19,
        prespecified: true,
        primary: false,
      },
    ],
    "Lorvanitide 120 mg vs Placebo",
    { width: 330, forPrint: true },
  );

  it("writes the title, axis and labels as <text> in Noto Sans", async () => {
    const svg = await specToSvg(spec);
    const texts = svg.match(/<text\b/g) ?? [];
    expect(texts.length).toBeGreaterThan(10);
    expect(svg).toContain("Does the treatment conclusion hold in every analysis?");
    expect(svg).toMatch(/font-family="Noto Sans"/);
  });

  it("draws the glyphs with the shipped fonts, and a render without fonts visibly loses them", async () => {
    const svg = await specToSvg(spec);
    const withFonts = inkInTopRows(svg, 40, true);
    const withoutFonts = inkInTopRows(svg, 40, false);
    expect(withFonts).toBeGreaterThan(400);
    expect(withoutFonts).toBeLessThan(withFonts / 10);
    const { png, width, height } = svgToPng(svg);
    expect(png.subarray(1, 4).toString("latin1")).toBe("PNG");
    expect(width).toBeGreaterThan(600);
    expect(height).toBeGreaterThan(100);
  });
});
