/**
 * The Noto Sans faces shipped with the app as TrueType files (the @expo-google-fonts/noto-sans
 * package carries the same Noto Sans 2.015 as the web fonts, as TTF, which resvg and Word read;
 * the @fontsource files are WOFF/WOFF2 only). Figures are drawn with them and the Word appendix
 * embeds them, subset to the characters the document uses, so it looks the same everywhere.
 */
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import subsetFont from "subset-font";

export const FONT_FAMILY = "Noto Sans";

const require = createRequire(import.meta.url);

export interface FontFaces {
  regularPath: string;
  boldPath: string;
  regular: Buffer;
  bold: Buffer;
}

let faces: FontFaces | null = null;

/** The regular and bold TTF files, read once. */
export function notoSans(): FontFaces {
  if (!faces) {
    const regularPath = require.resolve("@expo-google-fonts/noto-sans/400Regular/NotoSans_400Regular.ttf");
    const boldPath = require.resolve("@expo-google-fonts/noto-sans/700Bold/NotoSans_700Bold.ttf");
    faces = { regularPath, boldPath, regular: readFileSync(regularPath), bold: readFileSync(boldPath) };
  }
  return faces;
}

/** Every character of the text, plus digits and basic punctuation so fields (page numbers) still draw. */
function characterSet(text: string): string {
  const base = "0123456789 .,:;()-–—/%+−=<>·√|";
  return [...new Set([...base, ...text])].sort().join("");
}

/** Both faces cut down to the characters of `text` (TrueType, as Word embeds). Same text, same bytes. */
export async function subsetNotoSans(text: string): Promise<{ regular: Buffer; bold: Buffer }> {
  const { regular, bold } = notoSans();
  const chars = characterSet(text);
  const [r, b] = await Promise.all([
    subsetFont(regular, chars, { targetFormat: "truetype" }),
    subsetFont(bold, chars, { targetFormat: "truetype" }),
  ]);
  return { regular: r, bold: b };
}
