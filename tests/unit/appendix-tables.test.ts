/**
 * The appendix's tables as the Word document holds them, read back from the generated .docx
 * (document.xml): the deviation log gives its rationale the line's room (its grid column is at
 * least 24 characters wide and the widest), the treatment contrasts and adjusted means carry the
 * HC3 columns the results page shows, and a logistic model's conditional odds ratios are there as
 * on the page. Each number is the stored rerun's (whose values are checked against R in
 * tests/reference). Figures are left out of the rendered document here: appendix.test.ts covers them.
 */
import JSZip from "jszip";
import { beforeAll, describe, expect, it } from "vitest";
import { makeSignedRerun, type SignedRerun } from "../support/signed-rerun";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { buildAppendixContent } = await import("~/.server/appendix/build-content.server");
const { renderDocx } = await import("~/.server/appendix/docx.server");
const { getRerun } = await import("~/.server/reruns/reruns.server");
const { contrastsOf } = await import("~/.server/reruns/rerun-view.server");
const { fmt, fmtCi, fmtP } = await import("~/shared/format");

type Content = Awaited<ReturnType<typeof buildAppendixContent>>;

const cellText = (xml: string) =>
  [...xml.matchAll(/<w:t(?:\s[^>]*)?>([^<]*)<\/w:t>/g)].map((m) => m[1]).join("");
const decode = (x: string) =>
  x
    .replace(/&amp;/g, "&")
    .replace(/&lt;/g, "<")
    .replace(/&gt;/g, ">")
    .replace(/&quot;/g, '"')
    .replace(/&apos;/g, "'");

/** Each table of document.xml: the caption before it, its grid column widths (twips) and its rows of cell texts. */
function tables(xml: string): { caption: string; grid: number[]; rows: string[][] }[] {
  const out: { caption: string; grid: number[]; rows: string[][] }[] = [];
  const re = /<w:tbl>([\s\S]*?)<\/w:tbl>/g;
  let m: RegExpExecArray | null;
  while ((m = re.exec(xml))) {
    const before = xml.slice(0, m.index);
    const lastP = before.lastIndexOf("<w:p>") >= 0 ? before.slice(before.lastIndexOf("<w:p>")) : "";
    const grid = [...m[1].matchAll(/<w:gridCol w:w="(\d+)"\/>/g)].map((g) => Number(g[1]));
    const rows = [...m[1].matchAll(/<w:tr>([\s\S]*?)<\/w:tr>/g)].map((r) =>
      [...r[1].matchAll(/<w:tc>([\s\S]*?)<\/w:tc>/g)].map((c) => decode(cellText(c[1]))),
    );
    out.push({ caption: decode(cellText(lastP)), grid, rows });
  }
  return out;
}

/** The generated document of the content, without its figures (rendering them is appendix.test.ts's job). */
async function documentXml(content: Content): Promise<string> {
  const tablesOnly = {
    ...content,
    sections: content.sections.map((s) => ({ ...s, blocks: s.blocks.filter((b) => b.kind !== "figure") })),
  };
  const zip = await JSZip.loadAsync(await renderDocx(tablesOnly));
  return zip.file("word/document.xml")!.async("string");
}

let s: SignedRerun;
let xml = "";

beforeAll(async () => {
  s = await makeSignedRerun();
  xml = await documentXml(await buildAppendixContent(s.studyId, { kind: "rerun", rerunId: s.rerunId }));
}, 240_000);

describe("the deviation log in the Word appendix", () => {
  it("gives the rationale the widest column, wide enough to read as a sentence", () => {
    const log = tables(xml).find((x) => /Deviation log with assessments/.test(x.caption))!;
    expect(log.rows[0]).toEqual(["Check", "Finding", "Assessment", "Rationale", "Assessed by"]);
    const rationale = log.grid[3];
    expect(rationale).toBeGreaterThanOrEqual(24 * 95 + 220);
    expect(rationale).toBe(Math.max(...log.grid));
    expect(log.grid.reduce((a, w) => a + w, 0)).toBeLessThanOrEqual(11906 - 2 * 1247);
    for (const row of log.rows.slice(1)) {
      expect(row[2]).toBe("Model assumption; impact: none; action: planned sensitivity analysis");
      expect(row[3]).toBe("The planned sensitivity analyses leave the treatment conclusion unchanged.");
    }
  });
});

describe("HC3 columns in the Word appendix", () => {
  it("are in the treatment contrasts and adjusted means, equal to the stored results the page shows", async () => {
    const doc = (await getRerun(s.studyId, s.rerunId)).doc!;
    const r = doc.result;
    if (r.kind !== "linear") throw new Error("the demo's primary model is linear");
    const contrasts = tables(xml).find((x) =>
      /Treatment contrasts against the reference arm/.test(x.caption),
    )!;
    expect(contrasts.rows[0]).toEqual([
      "Comparison",
      "Difference",
      "SE",
      "95% CI",
      "t",
      "p",
      "HC3 SE",
      "HC3 95% CI",
      "HC3 p",
    ]);
    contrastsOf(doc).forEach((c, i) => {
      expect(contrasts.rows[i + 1].slice(6)).toEqual([
        fmt(c.hc3!.se),
        fmtCi(c.hc3!.lower, c.hc3!.upper),
        fmtP(c.hc3!.p),
      ]);
    });
    const means = tables(xml).find((x) => /Adjusted means/.test(x.caption))!;
    expect(means.rows[0].at(-1)).toBe("HC3 95% CI");
    r.adjustedMeans!.forEach((m, i) =>
      expect(means.rows[i + 1].at(-1)).toBe(fmtCi(m.hc3.lower, m.hc3.upper)),
    );
  });
});

describe("the conditional odds ratios of a logistic model in the Word appendix", () => {
  it("are tabled as on the results page: ratio, Wald and profile-likelihood intervals", async () => {
    const plans = await import("~/.server/plans/plans.server");
    const reruns = await import("~/.server/reruns/reruns.server");
    const findings = await import("~/.server/reruns/findings.server");
    const { runOneJob } = await import("~/.server/jobs/jobs.server");
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
    const id = await reruns.startRerun(s.people.priya, s.studyId, {
      plannedModelId: modelId,
      datasetVersionId: s.datasetVersionId,
      options: { variant: "planned" },
    });
    while (await runOneJob()) {
      // the rerun
    }
    for (const f of await findings.findingsOf(id))
      await findings.assessFinding(s.people.priya, s.studyId, f.id, {
        category: "model_assumption",
        impact: "none",
        action: "none",
        rationale: "Reviewed; the treatment conclusion is unchanged.",
      });
    await findings.signRerun({ ...s.people.tomas, signedInAt: new Date().toISOString() }, s.studyId, id);
    const doc = (await reruns.getRerun(s.studyId, id)).doc!;
    if (doc.result.kind !== "glm") throw new Error("expected a GLM");
    const glmXml = await documentXml(await buildAppendixContent(s.studyId, { kind: "rerun", rerunId: id }));
    const ratios = tables(glmXml).find((x) => /Odds ratios conditional on the covariates/.test(x.caption))!;
    expect(ratios).toBeDefined();
    expect(ratios.rows[0]).toEqual(["Coefficient", "Odds ratio", "Wald 95% CI", "Profile 95% CI"]);
    expect(ratios.rows.slice(1)).toEqual(
      doc.result.ratios!.map((r) => [
        r.name,
        fmt(r.ratio),
        fmtCi(r.lower, r.upper),
        r.profileLower == null || r.profileUpper == null ? "—" : fmtCi(r.profileLower, r.profileUpper),
      ]),
    );
    // the marginal contrasts carry the robust (Ye et al.) columns the page shows
    const contrasts = tables(glmXml).find((x) =>
      /Treatment contrasts against the reference arm/.test(x.caption),
    )!;
    expect(contrasts.rows[0].slice(-3)).toEqual(["Robust SE", "Robust 95% CI", "Robust p"]);
  }, 120_000);
});
