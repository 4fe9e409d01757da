/**
 * What a sponsor reader may and may not reach, proved on the server: the route modules' own
 * loaders and actions are called with a real session of the demo sponsor reader, on the demo
 * study with a signed rerun made through the services (tests/support/signed-rerun.ts).
 * Refusals: datasets pages, subject-level rows, upload, the rerun results page and its figures,
 * plan pages, the deviation log, the appendix page, and every action; another organisation's
 * reader and unpublished reruns get nothing. The published report holds no subject id.
 */
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { makeSignedRerun } = await import("../support/signed-rerun");
const { startSession } = await import("~/.server/session.server");
const { recordSponsorSignIn } = await import("~/.server/auth/oidc-sign-in.server");
const { db, t } = await import("~/.server/db/index.server");
const { eq } = await import("drizzle-orm");
const reruns = await import("~/.server/reruns/reruns.server");
const { storedResultJson } = await import("~/.server/reruns/result-store.server");
const { runOneJob } = await import("~/.server/jobs/jobs.server");
(await import("~/.server/background.server")).registerJobHandlers();

type Module = { loader?: (args: never) => Promise<unknown>; action?: (args: never) => Promise<unknown> };
const route = async (name: string): Promise<Module> => (await import(`../../app/routes/${name}`)) as Module;

let signed: Awaited<ReturnType<typeof makeSignedRerun>>;
let samCookie = "";
let inesCookie = "";
let unpublishedId = "";
const APP = "http://localhost:5180";

async function cookieFor(personId: string): Promise<string> {
  return (await startSession(new Request(APP), personId)).split(";")[0];
}

beforeAll(async () => {
  signed = await makeSignedRerun();
  // Sam signs in through OpenID Connect (the demo study is shared with Quillmoor Therapeutics); Ines's organisation has no share.
  const sam = await recordSponsorSignIn({
    iss: "http://127.0.0.1:7100",
    sub: "sponsor-sponsor-reader",
    email: "sam.quill@quillmoor.example",
    name: "Sam Quill",
    organisation: "Quillmoor Therapeutics",
  });
  const ines = await recordSponsorSignIn({
    iss: "http://127.0.0.1:7100",
    sub: "sponsor-other",
    email: "ines.varga@harrowgate-bio.example",
    name: "Ines Varga",
    organisation: "Harrowgate Biologics",
  });
  samCookie = await cookieFor(sam.id);
  inesCookie = await cookieFor(ines.id);
  // A completed rerun nobody signed: not a report.
  unpublishedId = await reruns.startRerun(signed.people.priya, signed.studyId, {
    plannedModelId: signed.plannedModelId,
    datasetVersionId: signed.datasetVersionId,
    options: { variant: "planned" },
  });
  while (await runOneJob()) {
    // run the queued rerun
  }
}, 120_000);

/** The HTTP status a loader or action answers with: 200 when it returns, else the status of what it throws. */
async function statusOf(work: Promise<unknown>): Promise<number> {
  try {
    const out = await work;
    return out instanceof Response ? out.status : 200;
  } catch (thrown) {
    if (thrown instanceof Response) return thrown.status;
    const init = (thrown as { init?: { status?: number } }).init;
    if (init?.status) return init.status;
    throw thrown;
  }
}

function get(path: string, cookie: string): Request {
  return new Request(`${APP}${path}`, { headers: { Cookie: cookie } });
}

function post(path: string, cookie: string, fields: Record<string, string>): Request {
  return new Request(`${APP}${path}`, {
    method: "POST",
    headers: { Cookie: cookie, Origin: APP },
    body: new URLSearchParams(fields),
  });
}

describe("a sponsor reader is refused everything but reports", () => {
  it("pages and resource routes with data, plans or unsigned results answer 403", async () => {
    const s = signed.studyId;
    const v = signed.datasetVersionId;
    const cases: [string, string, Record<string, string>][] = [
      ["study-datasets.tsx", `/studies/${s}/datasets`, { studyId: s }],
      ["study-dataset-version.tsx", `/studies/${s}/datasets/${v}`, { studyId: s, versionId: v }],
      [
        "study-dataset-rows.ts",
        `/studies/${s}/datasets/${v}/rows?offset=0&limit=50`,
        { studyId: s, versionId: v },
      ],
      ["study-datasets-upload.ts", `/studies/${s}/datasets/upload`, { studyId: s }],
      ["study-plans.tsx", `/studies/${s}/plans`, { studyId: s }],
      [
        "study-plan-version.tsx",
        `/studies/${s}/plans/${signed.planVersionId}`,
        { studyId: s, versionId: signed.planVersionId },
      ],
      [
        "study-planned-model.tsx",
        `/studies/${s}/plans/${signed.planVersionId}/models/${signed.plannedModelId}`,
        { studyId: s, versionId: signed.planVersionId, modelId: signed.plannedModelId },
      ],
      ["study-reruns.tsx", `/studies/${s}/reruns`, { studyId: s }],
      ["study-rerun.tsx", `/studies/${s}/reruns/${signed.rerunId}`, { studyId: s, rerunId: signed.rerunId }],
      [
        "study-rerun-figures.ts",
        `/studies/${s}/reruns/${signed.rerunId}/figures/cooks_distance`,
        { studyId: s, rerunId: signed.rerunId, figure: "cooks_distance" },
      ],
      ["study-deviations.tsx", `/studies/${s}/deviations`, { studyId: s }],
      ["study-appendix.tsx", `/studies/${s}/appendix`, { studyId: s }],
    ];
    for (const [file, path, params] of cases) {
      const m = await route(file);
      expect(
        `${file} ${await statusOf(m.loader!({ request: get(path, samCookie), params, context: {} } as never))}`,
      ).toBe(`${file} 403`);
    }
  });

  it("every action answers 403 and changes nothing", async () => {
    const s = signed.studyId;
    const before = (await db.select().from(t.auditEvents)).length;
    const cases: [string, string, Record<string, string>, Record<string, string>][] = [
      ["study-datasets-upload.ts", `/studies/${s}/datasets/upload`, { studyId: s }, { name: "adeff" }],
      [
        "study-dataset-version.tsx",
        `/studies/${s}/datasets/${signed.datasetVersionId}`,
        { studyId: s, versionId: signed.datasetVersionId },
        { intent: "lock" },
      ],
      [
        "study-plans.tsx",
        `/studies/${s}/plans`,
        { studyId: s },
        { title: "Mine", sapName: "x", sapVersion: "1", sapDate: "2026-01-01" },
      ],
      [
        "study-plan-version.tsx",
        `/studies/${s}/plans/${signed.planVersionId}`,
        { studyId: s, versionId: signed.planVersionId },
        { intent: "approve" },
      ],
      [
        "study-planned-model.tsx",
        `/studies/${s}/plans/${signed.planVersionId}/models/new`,
        { studyId: s, versionId: signed.planVersionId, modelId: "new" },
        { revision: "1" },
      ],
      [
        "study-reruns.tsx",
        `/studies/${s}/reruns`,
        { studyId: s },
        { plannedModelId: signed.plannedModelId, datasetVersionId: signed.datasetVersionId },
      ],
      [
        "study-rerun.tsx",
        `/studies/${s}/reruns/${signed.rerunId}`,
        { studyId: s, rerunId: signed.rerunId },
        { intent: "again" },
      ],
      [
        "study-rerun.tsx",
        `/studies/${s}/reruns/${signed.rerunId}`,
        { studyId: s, rerunId: signed.rerunId },
        { intent: "sign" },
      ],
      [
        "study-appendix.tsx",
        `/studies/${s}/appendix`,
        { studyId: s },
        { intent: "export", scope: "rerun", id: signed.rerunId },
      ],
    ];
    for (const [file, path, params, fields] of cases) {
      const m = await route(file);
      expect(
        `${file} ${await statusOf(m.action!({ request: post(path, samCookie, fields), params, context: {} } as never))}`,
      ).toBe(`${file} 403`);
    }
    expect((await db.select().from(t.auditEvents)).length).toBe(before);
  });

  it("the report list and the published report open, without any subject id", async () => {
    const list = await route("study-reports.tsx");
    const listed = (await list.loader!({
      request: get(`/studies/${signed.studyId}/reports`, samCookie),
      params: { studyId: signed.studyId },
      context: {},
    } as never)) as { reports: { id: string }[] };
    expect(listed.reports.map((r) => r.id)).toEqual([signed.rerunId]);
    const page = await route("study-report.tsx");
    const report = await page.loader!({
      request: get(`/studies/${signed.studyId}/reports/${signed.rerunId}`, samCookie),
      params: { studyId: signed.studyId, rerunId: signed.rerunId },
      context: {},
    } as never);
    const json = JSON.stringify(report);
    // The demo subject ids look like QMT301-0217; the stored rerun names them in its check texts.
    const [row] = await db.select().from(t.reruns).where(eq(t.reruns.id, signed.rerunId));
    const stored = (await storedResultJson(row)) ?? "";
    expect(stored).toMatch(/QMT301-\d{4}/);
    expect(json).not.toMatch(/QMT301-/);
    expect(json).toContain("the subject ranked 1");
    const r = report as {
      checks: { flagged: unknown[]; flaggedCount: number }[];
      comparison: unknown[];
      signatures: { name: string }[];
      caution: string;
    };
    expect(r.checks.some((c) => c.flaggedCount > 0)).toBe(true);
    expect(r.comparison.length).toBe(1 + signed.sensitivityIds.length);
    expect(r.signatures.map((s) => s.name)).toEqual(["Tomas Berg"]);
    expect(r.caution).toBe("Results support, but do not replace, qualified statistical and medical review.");
    // the report speaks our words: fit statistics in a labelled table, the family as the trade writes it, t for a linear model
    const results = (
      report as {
        results: {
          kind: string;
          statisticName: string;
          fitStatistics: { label: string; value: string }[] | null;
          coefficients: { name: string }[];
        };
      }
    ).results;
    expect([results.kind, results.statisticName]).toEqual(["linear", "t"]);
    expect(results.fitStatistics?.[0]).toMatchObject({
      label: "Distribution and link",
      value: expect.stringMatching(/^Normal \(identity link\)/),
    });
    expect(results.coefficients.map((c) => c.name).filter((n) => n.includes("="))).toEqual([]);
    // the diagnostic figures, drawn on the server as pictures, each check's own figure among them
    const figures = (report as { figures: { key: string; src: string | null; alt: string; width: number }[] })
      .figures;
    expect(figures.map((f) => f.key)).toEqual(
      expect.arrayContaining(["residuals_fitted", "qq", "influence", "leverage_residual", "dfbetas", "gvif"]),
    );
    expect(
      figures.every((f) => f.src === null || (f.src.startsWith("data:image/png;base64,") && f.width > 500)),
    ).toBe(true);
    // the pictures' text names subjects by rank: the same figure's SVG, drawn for the report's viewer
    const { renderFigure } = await import("~/.server/appendix/figures.server");
    const { figureData, figureSpec } = await import("~/figures/registry");
    const doc = JSON.parse(stored);
    const svg = (
      await renderFigure(
        figureSpec(figureData(doc, "influence", { withSubjectIds: false }), {
          width: 560,
          height: 230,
          forPrint: true,
        }),
      )
    ).svg;
    expect(svg).toMatch(/Most influential/);
    expect(svg).not.toMatch(/QMT301-/);
  });

  it("a rationale that names a subject is shown with the id withheld", async () => {
    const { redaction } = await import("~/.server/redaction.server");
    const redact = redaction(false, [], ["QMT301-0217", "AB 12"]);
    expect(redact.text("Subject QMT301-0217 was checked; p = 0.0217; AB 12 too.")).toBe(
      "A subject was checked; p = 0.0217; (id withheld) too.",
    );
  });

  it("an unpublished rerun is not a report: 404", async () => {
    const page = await route("study-report.tsx");
    const status = await statusOf(
      page.loader!({
        request: get(`/studies/${signed.studyId}/reports/${unpublishedId}`, samCookie),
        params: { studyId: signed.studyId, rerunId: unpublishedId },
        context: {},
      } as never),
    );
    expect(status).toBe(404);
  });

  it("a reader of an organisation the study is not shared with is refused", async () => {
    for (const file of ["study-reports.tsx", "study-report.tsx", "study-overview.tsx"]) {
      const m = await route(file);
      const status = await statusOf(
        m.loader!({
          request: get(`/studies/${signed.studyId}/reports/${signed.rerunId}`, inesCookie),
          params: { studyId: signed.studyId, rerunId: signed.rerunId },
          context: {},
        } as never),
      );
      expect(`${file} ${status}`).toBe(`${file} 403`);
    }
  });
});
