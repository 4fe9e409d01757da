/**
 * The Word appendix read back: the package is opened with JSZip and its XML checked against the
 * rerun's stored results (every number of the coefficient, adjusted-means, contrast and check
 * tables), the figures with their alt text, the caution, the page-number field, the embedded
 * fonts, and the same SHA-256 for a second export. When LibreOffice (Debian's
 * libreoffice-writer-nogui) is installed, the file is converted to PDF and its pages counted.
 */
import { execFileSync, spawnSync } from "node:child_process";
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import JSZip from "jszip";
import { beforeAll, describe, expect, it } from "vitest";
import { makeSignedRerun, type SignedRerun } from "../support/signed-rerun";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const appendix = await import("~/.server/appendix/appendix.server");
const { buildAppendixContent } = await import("~/.server/appendix/build-content.server");
const narratives = await import("~/.server/appendix/narratives.server");
const { specToSvg } = await import("~/.server/appendix/figures.server");
const { getRerun } = await import("~/.server/reruns/reruns.server");
const { db, t } = await import("~/.server/db/index.server");
const { eq } = await import("drizzle-orm");

let s: SignedRerun;
let zip: JSZip;
let documentXml = "";
let bytes: Buffer;
let doc: NonNullable<Awaited<ReturnType<typeof getRerun>>["doc"]>;
let content: Awaited<ReturnType<typeof buildAppendixContent>>;

/** The text of a cell: every w:t run joined. */
const cellText = (xml: string) =>
  [...xml.matchAll(/<w:t(?:\s[^>]*)?>([^<]*)<\/w:t>/g)].map((m) => m[1]).join("");
const decode = (x: string) =>
  x
    .replace(/&amp;/g, "&")
    .replace(/&lt;/g, "<")
    .replace(/&gt;/g, ">")
    .replace(/&quot;/g, '"')
    .replace(/&apos;/g, "'");

/** The tables of document.xml as rows of cell texts, each with the caption paragraph before it. */
function tables(xml: string): { caption: string; rows: string[][] }[] {
  const out: { caption: string; rows: string[][] }[] = [];
  const re = /<w:tbl>([\s\S]*?)<\/w:tbl>/g;
  let m: RegExpExecArray | null;
  while ((m = re.exec(xml))) {
    const before = xml.slice(0, m.index);
    const lastP = before.lastIndexOf("<w:p>") >= 0 ? before.slice(before.lastIndexOf("<w:p>")) : "";
    const rows = [...m[1].matchAll(/<w:tr>([\s\S]*?)<\/w:tr>/g)].map((r) =>
      [...r[1].matchAll(/<w:tc>([\s\S]*?)<\/w:tc>/g)].map((c) => decode(cellText(c[1]))),
    );
    out.push({ caption: decode(cellText(lastP)), rows });
  }
  return out;
}

/** A number as the tables print it: a true minus sign. */
const num = (cell: string) => Number(cell.replace(/−/g, "-"));
const ci = (cell: string) => cell.split(" to ").map(num);

beforeAll(async () => {
  s = await makeSignedRerun();
  doc = (await getRerun(s.studyId, s.rerunId)).doc!;
  await narratives.saveNarrative(
    s.people.helen,
    s.studyId,
    s.planVersionId,
    "results",
    "The adjusted difference favours the higher dose.\n\nNo check changes this reading.",
  );
  content = await buildAppendixContent(s.studyId, { kind: "rerun", rerunId: s.rerunId });
  const row = await appendix.exportAppendix(s.people.helen, s.studyId, { kind: "rerun", rerunId: s.rerunId });
  bytes = await appendix.appendixBytes(row);
  zip = await JSZip.loadAsync(bytes);
  documentXml = await zip.file("word/document.xml")!.async("string");
  const dir = path.resolve("test-results", "appendix");
  mkdirSync(dir, { recursive: true });
  writeFileSync(path.join(dir, "appendix.docx"), bytes);
}, 240_000);

describe("the Word appendix of a signed rerun", () => {
  it("has a coefficient table whose every number is the stored result's", () => {
    const tbl = tables(documentXml).find((x) => /Estimated coefficients/.test(x.caption))!;
    expect(tbl).toBeDefined();
    const [header, ...rows] = tbl.rows;
    expect(header).toEqual(["Coefficient", "Estimate", "SE", "t", "p", "95% CI"]);
    expect(rows).toHaveLength(doc.result.coefficients.length);
    rows.forEach((r, i) => {
      const c = doc.result.coefficients[i];
      expect(r[0]).toBe(c.name);
      expect(num(r[1])).toBeCloseTo(c.estimate, 3);
      expect(num(r[2])).toBeCloseTo(c.se, 3);
      expect(num(r[3])).toBeCloseTo(c.statistic, 2);
      if (c.p >= 0.0001) expect(num(r[4])).toBeCloseTo(c.p, 4);
      else expect(r[4]).toBe("<0.0001");
      const [lo, hi] = ci(r[5]);
      expect(lo).toBeCloseTo(c.lower, 3);
      expect(hi).toBeCloseTo(c.upper, 3);
    });
  });

  it("has adjusted means and treatment contrasts equal to the stored ones", () => {
    const r = doc.result;
    if (r.kind !== "linear") throw new Error("the demo's primary model is linear");
    const means = tables(documentXml).find((x) => /Adjusted means/.test(x.caption))!;
    expect(means.rows.slice(1).map((row) => row[0])).toEqual(r.adjustedMeans!.map((m) => m.level));
    means.rows.slice(1).forEach((row, i) => {
      expect(num(row[1])).toBeCloseTo(r.adjustedMeans![i].estimate, 3);
      expect(num(row[2])).toBeCloseTo(r.adjustedMeans![i].se, 3);
    });
    // the fit in a labelled table of our own, the family as the trade writes it
    const fit = tables(documentXml).find((x) => /Fit of the model/.test(x.caption))!;
    expect(fit.rows[0]).toEqual(["Quantity", "Value"]);
    expect(fit.rows[1][0]).toBe("Distribution and link");
    expect(fit.rows[1][1]).toMatch(/^Normal \(identity link\), (ordinary|weighted) least squares$/);
    expect(fit.rows.map((row) => row[0])).toEqual(
      expect.arrayContaining([
        "Residual standard deviation",
        "Log-likelihood",
        "Akaike information criterion",
      ]),
    );
    const contrasts = tables(documentXml).find((x) =>
      /Treatment contrasts against the reference arm/.test(x.caption),
    )!;
    expect(contrasts.rows.slice(1)).toHaveLength(r.contrasts!.length);
    contrasts.rows.slice(1).forEach((row, i) => {
      const c = r.contrasts![i];
      expect(row[0]).toBe(c.label);
      expect(num(row[1])).toBeCloseTo(c.estimate, 3);
      expect(num(row[2])).toBeCloseTo(c.se, 3);
      const [lo, hi] = ci(row[3]);
      expect(lo).toBeCloseTo(c.lower, 3);
      expect(hi).toBeCloseTo(c.upper, 3);
    });
  });

  it("summarises every check with its statistic, threshold and outcome in words, naming no subject", () => {
    const tbl = tables(documentXml).find((x) => /Diagnostic checks of the plan/.test(x.caption))!;
    expect(tbl.rows[0]).toEqual(["Check", "Statistic", "Threshold", "Outcome"]);
    const rows = tbl.rows.slice(1);
    expect(rows).toHaveLength(doc.checks.length);
    rows.forEach((row, i) => {
      const c = doc.checks[i];
      expect(row[0]).toBe(c.label);
      expect(row[2]).toBe(c.threshold);
      expect(row[3]).toMatch(
        c.outcome === "finding" ? /^Finding/ : c.outcome === "within" ? /^Within plan/ : /^Not computed/,
      );
      if (c.value !== null && c.value !== undefined && Number.isFinite(c.value)) {
        // observation checks print the largest value to 3 decimals; tests print the p-value to 4
        const pTest = /, p [=<]/.test(row[1]);
        const printed = pTest
          ? /, p (?:= )?([<\d.]+)/.exec(row[1])?.[1]
          : /(-?\d+\.\d+(?:e[-+]?\d+)?)/.exec(row[1])?.[1];
        expect(printed, `${c.label}: ${row[1]}`).toBeDefined();
        // an absolute value ("largest absolute deletion residual") is printed as one
        const shown = pTest ? c.value : (c.numbers?.statistic ?? c.value);
        if (printed && !printed.startsWith("<"))
          expect(Math.abs(Number(printed) - shown)).toBeLessThan(pTest ? 0.00006 : 0.0006);
      }
      if (c.flagged?.length) expect(row[3]).toContain(`${c.flagged.length} of ${doc.result.n} subjects`);
      // each test by its name with its statistic in words, never a program's "W = …" or bars around a signed number
      expect(row[1]).not.toMatch(/\b(W|BP|F) = |\|[^|]*\|/);
    });
    const ids = (doc.result.observations.id as readonly (string | null)[]).filter((x): x is string =>
      Boolean(x),
    );
    expect(ids.length).toBeGreaterThan(0);
    for (const id of ids) expect(documentXml.includes(id), `subject ${id} named in the appendix`).toBe(false);
  });

  it("logs each deviation once: the Finding column does not repeat the check named in the Check column", () => {
    const log = tables(documentXml).find((x) => /Deviation log with assessments/.test(x.caption))!;
    expect(log.rows.length).toBeGreaterThan(1);
    for (const row of log.rows.slice(1)) {
      expect(row[1].startsWith(`${row[0]}:`), row.join(" | ")).toBe(false);
      expect(row[1]).not.toMatch(/^([^:]+): \1:/);
    }
  });

  it("carries the figures as pictures with alt text, and numbered captions", async () => {
    const pictures = [...documentXml.matchAll(/<wp:docPr ([^>]*)\/?>/g)].map((m) => m[1]);
    const expected = content.sections.flatMap((x) => x.blocks).filter((b) => b.kind === "figure");
    expect(expected.length).toBeGreaterThanOrEqual(6);
    expect(pictures).toHaveLength(expected.length);
    for (const p of pictures) expect(/descr="[^"]{40,}"/.test(p), p).toBe(true);
    const media = Object.keys(zip.files).filter((f) => f.startsWith("word/media/") && f.endsWith(".png"));
    expect(media.length).toBe(expected.length);
    expect(documentXml).toMatch(/SEQ Figure/);
    expect(documentXml).toMatch(/SEQ Table/);
    // every figure keeps its words: the title and axis labels are <text> in Noto Sans
    for (const f of expected) {
      const svg = await specToSvg(f.spec as never);
      expect((svg.match(/<text\b/g) ?? []).length, f.caption).toBeGreaterThan(8);
      expect(svg).toMatch(/font-family="Noto Sans"/);
    }
  }, 60_000);

  it("states the caution, the provenance on the title page, and the narrative", () => {
    const text = decode(cellText(documentXml));
    expect(text).toContain("Results support, but do not replace, qualified statistical and medical review.");
    const r = content.titlePage.facts.map((f) => f.value).join(" ");
    expect(r).toContain(doc.datasetSha256);
    expect(text).toContain(doc.datasetSha256);
    expect(text).toContain(doc.engineVersion);
    expect(text).toContain("Tomas Berg");
    expect(text).toContain("The adjusted difference favours the higher dose.");
    expect(text).toContain("Medical writer's narrative, version 1, Helen Achter");
  });

  it("has page numbers, a running header with the study code and Word's heading styles", async () => {
    const footers = await Promise.all(
      Object.keys(zip.files)
        .filter((f) => /^word\/footer\d+\.xml$/.test(f))
        .map((f) => zip.file(f)!.async("string")),
    );
    expect(footers.join("")).toMatch(/PAGE/);
    expect(footers.join("")).toMatch(/NUMPAGES/);
    const headers = await Promise.all(
      Object.keys(zip.files)
        .filter((f) => /^word\/header\d+\.xml$/.test(f))
        .map((f) => zip.file(f)!.async("string")),
    );
    expect(headers.join("")).toContain("QMT-301");
    expect(documentXml).toMatch(/<w:pStyle w:val="Heading1"\/>/);
    expect(documentXml).toMatch(/<w:tblHeader\/>/);
    expect(documentXml).toMatch(/<w:tblStyle w:val="TableGrid"\/>/);
    const styles = await zip.file("word/styles.xml")!.async("string");
    expect(styles).toMatch(/<w:style w:type="table" w:styleId="TableGrid"><w:name w:val="Table Grid"\/>/);
    expect(styles).toMatch(/<w:docDefaults>/);
  });

  it("embeds Noto Sans, regular and bold, as subsets", async () => {
    const fontTable = await zip.file("word/fontTable.xml")!.async("string");
    expect(fontTable).toMatch(/w:name="Noto Sans"/);
    expect(fontTable).toMatch(/<w:embedRegular /);
    expect(fontTable).toMatch(/<w:embedBold /);
    const fonts = Object.keys(zip.files).filter((f) => f.startsWith("word/fonts/") && f.endsWith(".odttf"));
    expect(fonts).toHaveLength(2);
    const full = readFileSync(
      path.resolve("node_modules/@expo-google-fonts/noto-sans/400Regular/NotoSans_400Regular.ttf"),
    ).length;
    for (const f of fonts) expect((await zip.file(f)!.async("uint8array")).length).toBeLessThan(full / 3);
    const settings = await zip.file("word/settings.xml")!.async("string");
    expect(settings).toMatch(/embedTrueTypeFonts/);
  });

  it("gives the same bytes, hence the same SHA-256, when the same signed rerun is exported again", async () => {
    const first = await db.select().from(t.appendices).where(eq(t.appendices.studyId, s.studyId));
    const again = await appendix.exportAppendix(s.people.helen, s.studyId, {
      kind: "rerun",
      rerunId: s.rerunId,
    });
    expect(again.sha256).toBe(first[0].sha256);
    expect(again.storedPath).toBe(first[0].storedPath);
    const core = await zip.file("docProps/core.xml")!.async("string");
    const signedAt = content.issuedAt.slice(0, 19);
    expect(core).toContain(signedAt);
    const audit = await db.select().from(t.auditEvents).where(eq(t.auditEvents.action, "appendix.export"));
    expect(audit).toHaveLength(2);
    expect(audit[0].afterJson).toContain(first[0].sha256);
    // the e-mail notice is queued in the export's own transaction, naming the study, never a subject
    const mail = (await db.select().from(t.mailOutbox)).filter((m) =>
      /Word appendix exported/.test(m.subject),
    );
    expect(mail.length).toBeGreaterThanOrEqual(2);
    expect(mail[0].textBody).toContain(first[0].sha256);
  });

  it("changes when the narrative changes, and keeps every narrative version", async () => {
    await narratives.saveNarrative(
      s.people.helen,
      s.studyId,
      s.planVersionId,
      "results",
      "A second reading of the results.",
    );
    const history = await narratives.narrativeHistory(s.studyId, s.planVersionId);
    expect(history.results.map((n) => n.version)).toEqual([2, 1]);
    const changed = await appendix.renderAppendix(s.studyId, { kind: "rerun", rerunId: s.rerunId });
    expect(changed.sha256).not.toBe((await appendix.listAppendices(s.studyId))[0].sha256);
  });

  it("exports all signed primary reruns of a plan version, a logistic model beside the linear one", async () => {
    const plans = await import("~/.server/plans/plans.server");
    const reruns = await import("~/.server/reruns/reruns.server");
    const findings = await import("~/.server/reruns/findings.server");
    const { runOneJob } = await import("~/.server/jobs/jobs.server");
    (await import("~/.server/background.server")).registerJobHandlers();
    const next = await plans.startNextVersion(s.people.priya, s.studyId, s.planVersionId);
    const v2 = await plans.getPlanVersion(s.studyId, next);
    const linear = v2.models[0];
    if (linear.spec.family === "cox") throw new Error("the demo's first planned model is linear");
    const responder = {
      ...linear,
      key: "responder",
      title: "Responders at week 12",
      spec: { ...linear.spec, response: "resp", family: "binomial" as const },
      checks: linear.checks.filter((c) => ["cooks_distance", "leverage"].includes(c.key)),
      sensitivity: [],
    };
    const modelId = await plans.savePlannedModel(
      s.people.priya,
      s.studyId,
      next,
      v2.version.revision,
      null,
      responder,
    );
    await plans.submitForApproval(s.people.priya, s.studyId, next, v2.version.revision + 1);
    await plans.approvePlanVersion(
      { ...s.people.tomas, signedInAt: new Date().toISOString() },
      s.studyId,
      next,
    );
    const ids: string[] = [];
    for (const plannedModelId of [linear.id, modelId])
      ids.push(
        await reruns.startRerun(s.people.priya, s.studyId, {
          plannedModelId,
          datasetVersionId: s.datasetVersionId,
          options: { variant: "planned" },
        }),
      );
    while (await runOneJob()) {
      // run the queued reruns
    }
    for (const id of ids) {
      expect((await reruns.getRerun(s.studyId, id)).rerun.status).toBe("completed");
      for (const f of await findings.findingsOf(id))
        await findings.assessFinding(s.people.priya, s.studyId, f.id, {
          category: "model_assumption",
          impact: "none",
          action: "none",
          rationale: "Reviewed; the treatment conclusion is unchanged.",
        });
      await findings.signRerun({ ...s.people.tomas, signedInAt: new Date().toISOString() }, s.studyId, id);
    }
    const both = await appendix.renderAppendix(s.studyId, { kind: "plan_version", planVersionId: next });
    expect(both.content.rerunIds).toEqual(ids);
    writeFileSync(path.resolve("test-results", "appendix", "appendix-plan-version.docx"), both.bytes);
    const xml = await (await JSZip.loadAsync(both.bytes)).file("word/document.xml")!.async("string");
    const captions = tables(xml).map((x) => x.caption);
    expect(captions.filter((c) => /Estimated coefficients/.test(c))).toHaveLength(2);
    expect(captions.some((c) => /Estimated coefficients, Responders at week 12/.test(c))).toBe(true);
    expect(decode(cellText(xml))).toMatch(/generalized linear model \(binomial distribution, logit link\)/);
    const binomialFit = tables(xml).find((x) => /Fit of the model, Responders at week 12/.test(x.caption))!;
    expect(binomialFit.rows[1]).toEqual([
      "Distribution and link",
      "Binomial (logit link), maximum likelihood",
    ]);
    expect(binomialFit.rows.map((row) => row.join(" ")).join(" ")).not.toMatch(
      /binomial, logit|Residual deviance|Null deviance/,
    );
    // the binomial model's fit figures, for the logistic model only, with their counts in the alt text
    const figures = both.content.sections
      .flatMap((x) => x.blocks)
      .flatMap((b) => (b.kind === "figure" ? [b] : []));
    const fitFigures = figures.filter((f) =>
      /^(Binned residuals|Calibration by group of predicted risk),/.test(f.caption),
    );
    expect(fitFigures.map((f) => f.caption)).toEqual([
      "Binned residuals, Responders at week 12",
      "Calibration by group of predicted risk, Responders at week 12",
    ]);
    expect(fitFigures[0].alt).toMatch(/\d+ of \d+ bins lie outside their band/);
    expect(fitFigures[1].alt).toMatch(/Hosmer–Lemeshow statistic [\d.]+ on 8 degrees of freedom, p [=<] /);
    const pictures = [...xml.matchAll(/<wp:docPr ([^>]*)\/?>/g)];
    expect(pictures).toHaveLength(figures.length);
  }, 120_000);

  it("refuses a rerun that is not signed", async () => {
    await expect(
      buildAppendixContent(s.studyId, { kind: "rerun", rerunId: s.sensitivityIds[0] }),
    ).rejects.toMatchObject({ init: { status: 409 } });
  });

  const soffice = spawnSync("which", ["soffice"]).status === 0;
  it.skipIf(!soffice)(
    "converts to PDF with LibreOffice with a sensible number of pages",
    () => {
      const out = mkdtempSync(path.join(os.tmpdir(), "plumbline-appendix-pdf-"));
      const file = path.join(out, "appendix.docx");
      writeFileSync(file, bytes);
      execFileSync(
        "soffice",
        [
          "--headless",
          `-env:UserInstallation=file://${out}/profile`,
          "--convert-to",
          "pdf",
          "--outdir",
          out,
          file,
        ],
        { timeout: 180_000, stdio: "pipe" },
      );
      const pdf = readFileSync(path.join(out, "appendix.pdf"));
      writeFileSync(path.resolve("test-results", "appendix", "appendix.pdf"), pdf);
      const pages = (pdf.toString("latin1").match(/\/Type\s*\/Page[^s]/g) ?? []).length;
      expect(pages).toBeGreaterThanOrEqual(5);
      expect(pages).toBeLessThanOrEqual(40);
    },
    200_000,
  );
});
