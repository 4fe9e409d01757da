/**
 * The appendix as one content model: everything the Word file and the page's preview show, in
 * order. Two renderers read it (docx.server.ts for the .docx, the appendix page for HTML), so
 * the preview is the document. Everything but the narrative blocks comes from signed results.
 * Plain data, no server imports: the page imports it for the preview, the server for the export.
 */

/** Sections a medical writer may add narrative paragraphs to, in document order. */
export const NARRATIVE_SECTIONS = [
  "introduction",
  "methods",
  "results",
  "checks",
  "figures",
  "deviations",
  "sensitivity",
] as const;
export type NarrativeSection = (typeof NARRATIVE_SECTIONS)[number];

export const SECTION_TITLES: Record<NarrativeSection, string> = {
  introduction: "About this appendix",
  methods: "Statistical methods",
  results: "Results",
  checks: "Diagnostic checks",
  figures: "Diagnostic figures",
  deviations: "Deviations from the plan",
  sensitivity: "Sensitivity analyses",
};

export interface TableColumn {
  label: string;
  /** Numbers are right-aligned with tabular figures. */
  numeric?: boolean;
  /** Running text (a rationale, a finding): wraps, and gets the line's room left after the other columns. */
  prose?: boolean;
}

export type Block =
  | { kind: "heading"; text: string }
  | { kind: "paragraph"; text: string }
  | { kind: "bullets"; items: string[] }
  | { kind: "caution"; text: string }
  | {
      kind: "narrative";
      section: NarrativeSection;
      paragraphs: string[];
      version: number;
      author: string | null;
      at: string;
    }
  | {
      kind: "table";
      /** Stable key naming what the table holds, e.g. "coefficients:<rerunId>" (tests find tables by it). */
      key: string;
      number: number;
      caption: string;
      columns: TableColumn[];
      rows: string[][];
      note?: string;
    }
  | {
      kind: "figure";
      key: string;
      number: number;
      caption: string;
      /** Alt text: what the figure shows and what to look for, in words. */
      alt: string;
      /** The Vega-Lite specification, exactly as the results page builds it. */
      spec: unknown;
    };

export interface AppendixSection {
  key: NarrativeSection | "caution";
  title: string;
  blocks: Block[];
}

export interface TitlePage {
  studyCode: string;
  studyTitle: string;
  sponsor: string;
  planVersion: string;
  /** Label–value lines under the title: dataset, hashes, engine version, date, signers. */
  facts: { label: string; value: string }[];
}

export interface AppendixContent {
  /** The appendix's subject: one signed rerun, or a plan version's signed primary reruns. */
  scope: { kind: "rerun"; rerunId: string } | { kind: "plan_version"; planVersionId: string };
  studyId: string;
  planVersionId: string;
  rerunIds: string[];
  title: string;
  runningHeader: string;
  /** The latest signature time of the reruns: the document's created and modified date. */
  issuedAt: string;
  caution: string;
  titlePage: TitlePage;
  sections: AppendixSection[];
}

/** Every piece of text in the content, for subsetting the embedded font. */
export function allText(c: AppendixContent): string {
  const parts: string[] = [
    c.title,
    c.runningHeader,
    c.caution,
    c.titlePage.studyCode,
    c.titlePage.studyTitle,
    c.titlePage.sponsor,
    c.titlePage.planVersion,
  ];
  for (const f of c.titlePage.facts) parts.push(f.label, f.value);
  for (const s of c.sections) {
    parts.push(s.title);
    for (const b of s.blocks) {
      switch (b.kind) {
        case "heading":
        case "paragraph":
        case "caution":
          parts.push(b.text);
          break;
        case "bullets":
          parts.push(...b.items);
          break;
        case "narrative":
          parts.push(...b.paragraphs, b.author ?? "", b.at);
          break;
        case "table":
          parts.push(b.caption, b.note ?? "", ...b.columns.map((col) => col.label), ...b.rows.flat());
          break;
        case "figure":
          parts.push(b.caption, b.alt);
          break;
      }
    }
  }
  return parts.join("\n");
}
