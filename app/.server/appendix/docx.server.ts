/**
 * The Word renderer of the appendix content model (the `docx` package). Word's own heading,
 * title and caption styles; tables with a repeated header row; numbered tables and figures
 * (SEQ fields with their numbers already written, so every reader shows them); a running
 * header with the study code; "Page X of Y" and the caution in the footer; Noto Sans embedded
 * as a subset; alt text on every picture.
 *
 * Deterministic: the same content gives the same bytes. docx stamps the current time into the
 * core properties and the zip entries and draws random ids (font obfuscation keys, relationship
 * ids) from Math.random; all of that happens synchronously while the document is built and
 * packed, so that window runs with the clock fixed to the content's signature time and
 * Math.random seeded from the content's hash, and both are restored straight after.
 */
import { createHash } from "node:crypto";
import {
  AlignmentType,
  BorderStyle,
  Document,
  Footer,
  Header,
  HeadingLevel,
  ImageRun,
  LineRuleType,
  Packer,
  PageBreak,
  PageNumber,
  Paragraph,
  ShadingType,
  SimpleField,
  Table,
  TableCell,
  TableLayoutType,
  TableRow,
  TextRun,
  WidthType,
  type ISectionOptions,
} from "docx";
import type { TopLevelSpec } from "vega-lite";
import { allText, type AppendixContent, type Block } from "~/shared/appendix-content";
import { mulberry32 } from "~/engine/seeded-uniform";
import { renderFigure } from "./figures.server";
import { FONT_FAMILY, subsetNotoSans } from "./fonts.server";

const INK = "1D2433";
const SOFT = "4A5266";
const RULE = "BFB8A8";
const HEAD_FILL = "EFEADF";
/** Printable width of an A4 page with 2.2 cm margins, in pixels at 96 dpi (docx sizes pictures in pixels). */
const TEXT_WIDTH_PX = 630;
const MARGIN_TWIPS = 1247;

/** Runs `work` with `new Date()`/`Date.now()` fixed at `at` and Math.random seeded; restores both. */
function withFixedClockAndSeed<T>(at: Date, seed: number, work: () => T): T {
  const RealDate = Date;
  const realRandom = Math.random;
  const fixed = at.getTime();
  class FixedDate extends RealDate {
    constructor(...args: unknown[]) {
      if (args.length === 0) super(fixed);
      else super(...(args as [string | number | Date]));
    }
    static override now(): number {
      return fixed;
    }
    // Zip entries store local time: read local as UTC so the bytes do not depend on the machine's TZ.
    override getFullYear(): number {
      return this.getUTCFullYear();
    }
    override getMonth(): number {
      return this.getUTCMonth();
    }
    override getDate(): number {
      return this.getUTCDate();
    }
    override getHours(): number {
      return this.getUTCHours();
    }
    override getMinutes(): number {
      return this.getUTCMinutes();
    }
    override getSeconds(): number {
      return this.getUTCSeconds();
    }
    override getTimezoneOffset(): number {
      return 0;
    }
  }
  globalThis.Date = FixedDate as DateConstructor;
  Math.random = mulberry32(seed);
  try {
    return work();
  } finally {
    globalThis.Date = RealDate;
    Math.random = realRandom;
  }
}

// docx numbers pictures from a counter shared by every document of the process; each picture
// gets its figure number as id instead (unique within the document, the same on every export).
const text = (t: string, opts: { bold?: boolean; italics?: boolean; size?: number; color?: string } = {}) =>
  new TextRun({ text: t, ...opts });

const cellBorders = {
  top: { style: BorderStyle.SINGLE, size: 4, color: RULE },
  bottom: { style: BorderStyle.SINGLE, size: 4, color: RULE },
  left: { style: BorderStyle.NONE, size: 0, color: "FFFFFF" },
  right: { style: BorderStyle.NONE, size: 0, color: "FFFFFF" },
};

function caption(kind: "Table" | "Figure", number: number, words: string): Paragraph {
  return new Paragraph({
    style: "Caption",
    keepNext: kind === "Table",
    children: [
      text(`${kind} `, { bold: true }),
      new SimpleField(`SEQ ${kind} \\* ARABIC`, String(number)),
      text(". ", { bold: true }),
      text(words),
    ],
  });
}

/**
 * Word's own "Table Grid" table style (style id TableGrid), written into the document so every
 * reader knows it: thin rules above, below and between rows, none at the sides. docx takes it as
 * "external styles" and keeps its own defaults and the paragraph styles below beside it.
 */
const TABLE_GRID_STYLES =
  '<?xml version="1.0" encoding="UTF-8" standalone="yes"?><w:styles xmlns:w="http://schemas.openxmlformats.org/wordprocessingml/2006/main">' +
  '<w:style w:type="table" w:styleId="TableGrid"><w:name w:val="Table Grid"/><w:uiPriority w:val="39"/>' +
  `<w:tblPr><w:tblBorders><w:top w:val="single" w:sz="4" w:space="0" w:color="${RULE}"/><w:bottom w:val="single" w:sz="4" w:space="0" w:color="${RULE}"/><w:insideH w:val="single" w:sz="4" w:space="0" w:color="${RULE}"/></w:tblBorders>` +
  '<w:tblCellMar><w:left w:w="80" w:type="dxa"/><w:right w:w="80" w:type="dxa"/></w:tblCellMar></w:tblPr></w:style></w:styles>';

/** Printable width in twips (A4 less both margins). */
const TEXT_WIDTH_TWIPS = 11906 - 2 * MARGIN_TWIPS;

/** About 95 twips a character at 8.5 pt, plus the cell margins. */
const CHAR_TWIPS = 95;
const CELL_TWIPS = 220;
/** A prose column is never narrower than this many characters. */
const PROSE_MIN_CHARS = 24;
/** Other columns of a table with prose take at most this many characters a line before wrapping. */
const SHORT_MAX_CHARS = 20;

/**
 * Column widths: each column first gets room for its longest word, then the rest of the line in
 * proportion to √(longest text), so long prose columns do not starve short ones. A table with
 * prose columns (`prose`) gives the other columns their text up to SHORT_MAX_CHARS a line and the
 * prose columns everything left, at least PROSE_MIN_CHARS each: the rationale of a deviation then
 * reads as a paragraph instead of one word a line.
 */
export function columnWidths(b: Pick<Extract<Block, { kind: "table" }>, "columns" | "rows">): number[] {
  const width = (chars: number) => chars * CHAR_TWIPS + CELL_TWIPS;
  const cols = b.columns.map((c, i) => {
    const cells = [c.label, ...b.rows.map((r) => r[i] ?? "")];
    const longest = Math.max(c.label.length * 0.8, ...cells.slice(1).map((x) => x.length));
    const longestWord = Math.max(...cells.flatMap((x) => x.split(/\s+/).map((w) => w.length)));
    return {
      prose: Boolean(c.prose),
      longest,
      min: width(longestWord),
      weight: Math.sqrt(Math.max(longest, 6)),
    };
  });
  const fit = (mins: number[]) => {
    const total = mins.reduce((a, m) => a + m, 0);
    return mins.map((m) => Math.floor((m / total) * TEXT_WIDTH_TWIPS));
  };
  if (cols.some((c) => c.prose)) {
    const short = cols.map((c) =>
      c.prose ? 0 : Math.max(c.min, width(Math.min(c.longest, SHORT_MAX_CHARS))),
    );
    const proseMin = cols.map((c) => (c.prose ? Math.max(c.min, width(PROSE_MIN_CHARS)) : 0));
    const shortTotal = short.reduce((a, w) => a + w, 0);
    const proseTotal = proseMin.reduce((a, w) => a + w, 0);
    if (shortTotal + proseTotal > TEXT_WIDTH_TWIPS) {
      // the short columns give way first, down to their longest word; only then does everything shrink
      const mins = cols.map((c) => (c.prose ? 0 : c.min));
      const minTotal = mins.reduce((a, w) => a + w, 0);
      const room = TEXT_WIDTH_TWIPS - proseTotal - minTotal;
      if (room < 0) return fit(cols.map((c, i) => (c.prose ? proseMin[i] : c.min)));
      const share = room / Math.max(1, shortTotal - minTotal);
      return cols.map((c, i) => (c.prose ? proseMin[i] : Math.floor(mins[i] + (short[i] - mins[i]) * share)));
    }
    const rest = TEXT_WIDTH_TWIPS - shortTotal - proseTotal;
    const proseWeights = cols.reduce((a, c) => a + (c.prose ? c.weight : 0), 0);
    return cols.map((c, i) =>
      c.prose ? Math.floor(proseMin[i] + (rest * c.weight) / proseWeights) : short[i],
    );
  }
  const minTotal = cols.reduce((a, c) => a + c.min, 0);
  if (minTotal >= TEXT_WIDTH_TWIPS) return fit(cols.map((c) => c.min));
  const weights = cols.reduce((a, c) => a + c.weight, 0);
  return cols.map((c) => Math.floor(c.min + ((TEXT_WIDTH_TWIPS - minTotal) * c.weight) / weights));
}

function tableOf(b: Extract<Block, { kind: "table" }>): (Paragraph | Table)[] {
  const numeric = b.columns.map((c) => Boolean(c.numeric));
  const widths = columnWidths(b);
  const cell = (value: string, i: number, header: boolean) =>
    new TableCell({
      borders: cellBorders,
      width: { size: widths[i], type: WidthType.DXA },
      shading: header ? { type: ShadingType.CLEAR, color: "auto", fill: HEAD_FILL } : undefined,
      margins: { top: 40, bottom: 40, left: 80, right: 80 },
      children: [
        new Paragraph({
          alignment: numeric[i] ? AlignmentType.RIGHT : AlignmentType.LEFT,
          style: "TableText",
          children: [text(value, { bold: header })],
        }),
      ],
    });
  const table = new Table({
    style: "TableGrid",
    width: { size: TEXT_WIDTH_TWIPS, type: WidthType.DXA },
    columnWidths: widths,
    layout: TableLayoutType.FIXED,
    rows: [
      new TableRow({
        tableHeader: true,
        cantSplit: true,
        children: b.columns.map((c, i) => cell(c.label, i, true)),
      }),
      ...b.rows.map((r) => new TableRow({ cantSplit: true, children: r.map((v, i) => cell(v, i, false)) })),
    ],
  });
  return [
    caption("Table", b.number, b.caption),
    table,
    ...(b.note
      ? [new Paragraph({ style: "TableNote", children: [text(b.note)] })]
      : [new Paragraph({ style: "TableNote", children: [] })]),
  ];
}

async function figureOf(b: Extract<Block, { kind: "figure" }>): Promise<Paragraph[]> {
  const rendered = await renderFigure(b.spec as TopLevelSpec);
  const width = Math.min(TEXT_WIDTH_PX, Math.round(rendered.width / 2));
  const height = Math.round((rendered.height * width) / rendered.width);
  return [
    new Paragraph({
      keepNext: true,
      alignment: AlignmentType.CENTER,
      spacing: { before: 240, after: 0, line: 240, lineRule: LineRuleType.AUTO },
      children: [
        new ImageRun({
          type: "png",
          data: rendered.png,
          transformation: { width, height },
          altText: { id: String(b.number), name: `Figure ${b.number}`, title: b.caption, description: b.alt },
        }),
      ],
    }),
    caption("Figure", b.number, b.caption),
  ];
}

async function blockOf(b: Block): Promise<(Paragraph | Table)[]> {
  switch (b.kind) {
    case "heading":
      return [new Paragraph({ heading: HeadingLevel.HEADING_2, children: [text(b.text)] })];
    case "paragraph":
      return [new Paragraph({ children: [text(b.text)] })];
    case "bullets":
      return b.items.map((item) => new Paragraph({ bullet: { level: 0 }, children: [text(item)] }));
    case "caution":
      return [
        new Paragraph({
          border: {
            top: { style: BorderStyle.SINGLE, size: 8, color: "9A6B1F", space: 6 },
            bottom: { style: BorderStyle.SINGLE, size: 8, color: "9A6B1F", space: 6 },
          },
          spacing: { before: 120, after: 240 },
          children: [text("Caution. ", { bold: true }), text(b.text)],
        }),
      ];
    case "narrative":
      return [
        new Paragraph({
          style: "NarrativeLabel",
          children: [
            text(`Medical writer's narrative, version ${b.version}${b.author ? `, ${b.author}` : ""}`),
          ],
        }),
        ...b.paragraphs.map((p) => new Paragraph({ children: [text(p)] })),
      ];
    case "table":
      return tableOf(b);
    case "figure":
      return figureOf(b);
  }
}

function titlePage(c: AppendixContent): (Paragraph | Table)[] {
  const tp = c.titlePage;
  const factRows = tp.facts.map(
    (f) =>
      new TableRow({
        cantSplit: true,
        children: [
          new TableCell({
            borders: cellBorders,
            width: { size: 30, type: WidthType.PERCENTAGE },
            margins: { top: 40, bottom: 40, left: 80, right: 80 },
            children: [new Paragraph({ style: "TableText", children: [text(f.label, { bold: true })] })],
          }),
          new TableCell({
            borders: cellBorders,
            width: { size: 70, type: WidthType.PERCENTAGE },
            margins: { top: 40, bottom: 40, left: 80, right: 80 },
            children: [new Paragraph({ style: "TableText", children: [text(f.value)] })],
          }),
        ],
      }),
  );
  return [
    new Paragraph({ style: "Subtitle", spacing: { before: 1200 }, children: [text(tp.studyCode)] }),
    new Paragraph({ heading: HeadingLevel.TITLE, children: [text(c.title)] }),
    new Paragraph({ spacing: { after: 360 }, children: [text(tp.studyTitle, { color: SOFT })] }),
    new Table({ style: "TableGrid", width: { size: 100, type: WidthType.PERCENTAGE }, rows: factRows }),
    new Paragraph({
      spacing: { before: 360 },
      children: [text("Caution. ", { bold: true }), text(c.caution)],
    }),
    new Paragraph({ children: [new PageBreak()] }),
  ];
}

/** Renders the content model to a .docx file; the same content yields the same bytes. */
export async function renderDocx(c: AppendixContent): Promise<Buffer> {
  const body: (Paragraph | Table)[] = [...titlePage(c)];
  for (const s of c.sections) {
    if (s.key === "caution") continue; // on the title page and in every footer
    body.push(new Paragraph({ heading: HeadingLevel.HEADING_1, children: [text(s.title)] }));
    for (const b of s.blocks) body.push(...(await blockOf(b)));
  }
  const fonts = await subsetNotoSans(allText(c));
  const seed = createHash("sha256").update(JSON.stringify(c)).digest().readUInt32BE(0);
  const small = { size: 16, color: SOFT };
  const section: ISectionOptions = {
    properties: {
      titlePage: true,
      page: {
        size: { width: 11906, height: 16838 },
        margin: {
          top: MARGIN_TWIPS,
          bottom: MARGIN_TWIPS,
          left: MARGIN_TWIPS,
          right: MARGIN_TWIPS,
          header: 600,
          footer: 600,
        },
      },
    },
    headers: {
      first: new Header({ children: [new Paragraph({ children: [] })] }),
      default: new Header({
        children: [
          new Paragraph({
            alignment: AlignmentType.RIGHT,
            style: "Header",
            children: [text(c.runningHeader, small)],
          }),
        ],
      }),
    },
    footers: {
      first: new Footer({ children: [new Paragraph({ children: [] })] }),
      default: new Footer({
        children: [
          new Paragraph({ style: "Footer", children: [text(c.caution, small)] }),
          new Paragraph({
            alignment: AlignmentType.RIGHT,
            style: "Footer",
            children: [
              new TextRun({
                children: ["Page ", PageNumber.CURRENT, " of ", PageNumber.TOTAL_PAGES],
                ...small,
              }),
            ],
          }),
        ],
      }),
    },
    children: body,
  };
  const heading = (id: string, name: string, size: number, before: number) => ({
    id,
    name,
    basedOn: "Normal",
    next: "Normal",
    quickFormat: true,
    run: { font: FONT_FAMILY, size, bold: true, color: INK },
    paragraph: { spacing: { before, after: 120 }, keepNext: true, keepLines: true },
  });
  const built = withFixedClockAndSeed(new Date(c.issuedAt), seed, () => {
    const doc = new Document({
      creator: "Plumbline",
      title: c.title,
      subject: c.titlePage.studyTitle,
      description: c.caution,
      lastModifiedBy: "Plumbline",
      revision: 1,
      fonts: [{ name: FONT_FAMILY, data: fonts.regular, bold: fonts.bold }],
      features: { updateFields: false },
      externalStyles: TABLE_GRID_STYLES,
      styles: {
        default: {
          document: {
            run: { font: FONT_FAMILY, size: 20, color: INK },
            paragraph: { spacing: { after: 120, line: 276, lineRule: LineRuleType.AUTO } },
          },
        },
        paragraphStyles: [
          {
            id: "Title",
            name: "Title",
            basedOn: "Normal",
            next: "Normal",
            quickFormat: true,
            run: { font: FONT_FAMILY, size: 40, bold: true, color: INK },
            paragraph: { spacing: { after: 200 } },
          },
          {
            id: "Subtitle",
            name: "Subtitle",
            basedOn: "Normal",
            next: "Normal",
            quickFormat: true,
            run: { font: FONT_FAMILY, size: 24, bold: true, color: "9A6B1F" },
          },
          heading("Heading1", "heading 1", 30, 360),
          heading("Heading2", "heading 2", 24, 240),
          {
            id: "Caption",
            name: "caption",
            basedOn: "Normal",
            next: "Normal",
            quickFormat: true,
            run: { font: FONT_FAMILY, size: 18, color: INK },
            paragraph: { spacing: { before: 120, after: 80 } },
          },
          {
            id: "TableText",
            name: "Table Text",
            basedOn: "Normal",
            run: { font: FONT_FAMILY, size: 17 },
            paragraph: { spacing: { after: 0, line: 240, lineRule: LineRuleType.AUTO } },
          },
          {
            id: "TableNote",
            name: "Table Note",
            basedOn: "Normal",
            run: { font: FONT_FAMILY, size: 16, color: SOFT },
            paragraph: { spacing: { before: 60, after: 240 } },
          },
          {
            id: "NarrativeLabel",
            name: "Narrative Label",
            basedOn: "Normal",
            next: "Normal",
            run: { font: FONT_FAMILY, size: 16, italics: true, color: SOFT },
            paragraph: { spacing: { before: 200, after: 60 } },
          },
          {
            id: "Header",
            name: "header",
            basedOn: "Normal",
            run: { font: FONT_FAMILY, size: 16 },
            paragraph: { spacing: { after: 0 } },
          },
          {
            id: "Footer",
            name: "footer",
            basedOn: "Normal",
            run: { font: FONT_FAMILY, size: 16 },
            paragraph: { spacing: { after: 0 } },
          },
        ],
      },
      sections: [section],
    });
    return Packer.toBuffer(doc);
  });
  return built;
}
