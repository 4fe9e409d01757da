/**
 * What each role RECEIVES, not only whether it is let in: every page (document and client data
 * request), figure answer, API answer and export that a role without `dataset.rows` (medical
 * writer, sponsor reader) may open carries no subject id of the study's data and no
 * subject-level row. The biostatistician's answers are read as well, to show that the ids are
 * really in the data these answers are made from (so the check can fail).
 *
 * The study read here (PRV-301) is made through the services on the stack's database, with
 * assessments and a deviation whose rationales name subjects, as a biostatistician may type
 * them. Also: pages with subject rows are never stored by a cache (Cache-Control: no-store), and
 * static assets carry nosniff.
 */
import path from "node:path";
import JSZip from "jszip";
import { beforeAll, describe, expect, inject, it } from "vitest";
import { sessionCookieFor, testDb } from "../support/sessions";

const stack = inject("stack");
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");

const EMAIL = {
  admin: "morgan.reyes@plumbline.example",
  data_manager: "dana.okafor@plumbline.example",
  biostatistician: "priya.lindqvist@plumbline.example",
  second_biostatistician: "tomas.berg@plumbline.example",
  medical_writer: "helen.achter@plumbline.example",
  sponsor_reader: "sam.quill@quillmoor.example",
} as const;
type Who = keyof typeof EMAIL;

let studyId = "";
let datasetVersionId = "";
let planVersionId = "";
let plannedModelId = "";
let signedRerunId = "";
let childRerunId = "";
let unsignedRerunId = "";
let appendixId = "";
/** Every subject id of the locked dataset (its id column), longest first. */
let subjectIds: string[] = [];
const cookie: Partial<Record<Who, string>> = {};
const token: Partial<Record<Who, string>> = {};

function primaryForm(): FormData {
  const f = new FormData();
  const fields = {
    key: "primary",
    title: "Primary efficacy: change from baseline at week 12",
    datasetName: "adeff",
    populationColumn: "fasfl",
    populationValue: "Y",
    response: "chg",
    family: "gaussian",
    treatment: "arm",
    treatmentReference: "Placebo",
    id: "subjid",
  };
  for (const [k, v] of Object.entries(fields)) f.set(k, v);
  for (const c of ["base", "stratum", "region", "sex", "age"]) f.append("covariate", c);
  for (const c of [
    "cooks_distance",
    "leverage",
    "deletion_residual",
    "dfbetas_treatment",
    "dffits",
    "shapiro_wilk",
    "breusch_pagan",
    "brown_forsythe",
    "gvif",
  ])
    f.set(`check:${c}:enabled`, "on");
  f.set("sensitivity:robust_hc3", "on");
  return f;
}

beforeAll(async () => {
  const { db, t } = await import("~/.server/db/index.server");
  const { eq } = await import("drizzle-orm");
  const { createStudy } = await import("~/.server/studies.server");
  const { setStudyRole } = await import("~/.server/people.server");
  const { seedDemoDataset } = await import("~/.server/datasets/demo-seed.server");
  const { listLockedVersions, loadLockedTable } = await import("~/.server/datasets/catalog.server");
  const plans = await import("~/.server/plans/plans.server");
  const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
  const reruns = await import("~/.server/reruns/reruns.server");
  const findings = await import("~/.server/reruns/findings.server");
  const { runOneJob } = await import("~/.server/jobs/jobs.server");
  (await import("~/.server/background.server")).registerJobHandlers();
  const { createToken } = await import("~/.server/api/tokens.server");
  const { exportAppendix } = await import("~/.server/appendix/appendix.server");
  const person = async (email: string) => {
    const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
    return { id: p.id, name: p.displayName, organisation: p.organisation };
  };
  const who = Object.fromEntries(
    await Promise.all(Object.entries(EMAIL).map(async ([k, e]) => [k, await person(e)])),
  ) as Record<Who, { id: string; name: string; organisation: string | null }>;
  const created = await createStudy(who.admin, {
    code: "PRV-301",
    title: "Study read by every role",
    sponsor: "Quillmoor Therapeutics",
    compound: null,
    indication: null,
    phase: "3",
  });
  if (!created.ok) throw new Error(JSON.stringify(created.fieldErrors));
  studyId = created.study.id;
  const roles = {
    data_manager: "data_manager",
    biostatistician: "biostatistician",
    second_biostatistician: "biostatistician",
    medical_writer: "medical_writer",
    sponsor_reader: "sponsor_reader",
  } as const;
  for (const [k, role] of Object.entries(roles))
    await setStudyRole(who.admin, studyId, who[k as Who].id, role);
  await db
    .insert(t.studyShares)
    .values({ id: crypto.randomUUID(), studyId, organisation: who.sponsor_reader.organisation ?? "" });
  datasetVersionId = (await seedDemoDataset(studyId)).versionId;
  const locked = await listLockedVersions(studyId);
  const { table } = await loadLockedTable(datasetVersionId);
  subjectIds = [...new Set(table.columns.subjid ?? [])]
    .filter((s) => s.length > 0)
    .sort((a, b) => b.length - a.length);
  if (subjectIds.length < 100) throw new Error("The demo dataset has no subject id column (subjid).");

  const priya = who.biostatistician;
  planVersionId = (
    await plans.createPlan(priya, studyId, {
      title: "Efficacy models",
      sapName: "Statistical analysis plan",
      sapVersion: "2.0",
      sapDate: "2026-10-01",
    })
  ).versionId;
  const v = validatePlannedModel(
    readPlannedModelForm(primaryForm()),
    locked.map((x) => ({ name: x.datasetName, columns: x.columns })),
    [],
  );
  if (!v.ok) throw new Error(JSON.stringify(v.errors));
  plannedModelId = await plans.savePlannedModel(priya, studyId, planVersionId, 1, null, v.model);
  await plans.submitForApproval(priya, studyId, planVersionId, 2);
  await plans.approvePlanVersion(
    { ...who.second_biostatistician, signedInAt: new Date().toISOString() },
    studyId,
    planVersionId,
  );

  const finish = async (id: string) => {
    for (let i = 0; i < 600; i++) {
      await runOneJob(); // the server's worker may take the job first; either way it runs once
      const r = await reruns.getRerun(studyId, id);
      if (r.rerun.status === "completed" || r.rerun.status === "failed") return r;
      await new Promise((ok) => setTimeout(ok, 100));
    }
    throw new Error(`rerun ${id} did not finish`);
  };
  signedRerunId = await reruns.startRerun(priya, studyId, {
    plannedModelId,
    datasetVersionId,
    options: { variant: "planned" },
  });
  const primary = await finish(signedRerunId);
  const cooks = primary.doc!.checks.find((c) => c.key === "cooks_distance")!;
  const named = cooks.flagged?.[0]?.id ?? "";
  const other = subjectIds.find((s) => s !== named) ?? "";
  // What a biostatistician may type: the subject named in prose, in a rationale and a recorded deviation.
  const rationale = `Source records of subject ${named} and of ${other} were checked; both values are genuine.`;
  childRerunId = await reruns.startRerun(priya, studyId, {
    plannedModelId,
    datasetVersionId,
    options: { variant: "robust_hc3" },
    parentRerunId: signedRerunId,
  });
  await finish(childRerunId);
  for (const f of await findings.findingsOf(signedRerunId)) {
    await findings.assessFinding(priya, studyId, f.id, {
      category: "model_assumption",
      impact: "none",
      action: "planned_sensitivity",
      rationale,
    });
  }
  await findings.recordDeviation(priya, studyId, signedRerunId, {
    category: "data",
    impact: "none",
    action: "none",
    rationale: `Subject ${other} has a late visit; kept as planned.`,
  });
  await findings.signRerun(
    { ...who.second_biostatistician, signedInAt: new Date().toISOString() },
    studyId,
    signedRerunId,
  );
  appendixId = (await exportAppendix(who.medical_writer, studyId, { kind: "rerun", rerunId: signedRerunId }))
    .id;
  unsignedRerunId = await reruns.startRerun(priya, studyId, {
    plannedModelId,
    datasetVersionId,
    options: { variant: "planned" },
  });
  await finish(unsignedRerunId);
  for (const f of await findings.findingsOf(unsignedRerunId)) {
    await findings.assessFinding(priya, studyId, f.id, {
      category: "model_assumption",
      impact: "none",
      action: "planned_sensitivity",
      rationale,
    });
  }

  for (const k of ["biostatistician", "medical_writer", "sponsor_reader"] as const) {
    cookie[k] = await sessionCookieFor(stack, EMAIL[k]);
    const made = await createToken(who[k], { name: `${k} received-data check`, days: 7 });
    if (!made.ok) throw new Error(made.message);
    token[k] = made.token;
  }
}, 240_000);

/** The subject ids a text still names (whole words, so "0217" inside a p-value is no hit). */
function namedIn(text: string): string[] {
  const hits: string[] = [];
  for (const id of subjectIds) {
    const escaped = id.replace(/[.*+?^${}()|[\]\\]/g, "\\$&");
    if (new RegExp(`(?<![A-Za-z0-9_-])${escaped}(?![A-Za-z0-9_-])`).test(text)) hits.push(id);
    if (hits.length >= 3) break;
  }
  return hits;
}

/** Objects in a JSON value that are subject-level: a point with its subject or data row. */
function subjectRowsIn(value: unknown): unknown[] {
  const found: unknown[] = [];
  const stack: unknown[] = [value];
  while (stack.length) {
    const v = stack.pop();
    if (Array.isArray(v)) stack.push(...v);
    else if (v && typeof v === "object") {
      const o = v as Record<string, unknown>;
      if (
        (typeof o.subject === "string" && o.subject !== "") ||
        typeof o.row === "number" ||
        typeof o.subjectId === "string"
      )
        found.push(o);
      stack.push(...Object.values(o));
    }
  }
  return found;
}

async function get(url: string, who: Who, api = false): Promise<Response> {
  const headers: Record<string, string> = api
    ? { Authorization: `Bearer ${token[who]}` }
    : { Cookie: cookie[who] ?? "" };
  return fetch(`${stack.appUrl}${url}`, { headers, redirect: "manual" });
}

/** The text of a .docx package: every XML part, with tags removed. */
async function docxText(bytes: ArrayBuffer): Promise<string> {
  const zip = await JSZip.loadAsync(bytes);
  const parts = await Promise.all(
    Object.values(zip.files)
      .filter((f) => f.name.endsWith(".xml"))
      .map((f) => f.async("string")),
  );
  return parts.join("\n").replace(/<[^>]+>/g, "");
}

/** The figure addresses a results page asks for (the worker's list and every frame). */
function figureUrlsOf(html: string): string[] {
  const urls = new Set<string>();
  for (const m of html.matchAll(
    /\/studies\/[^"'\s\\]+?\/reruns\/[^"'\s\\/]+\/figures\/[a-z_]+(?:\?term=[^"'\s\\&]+)?/g,
  ))
    urls.add(m[0].replace(/&amp;/g, "&"));
  return [...urls];
}

const s = () => `/studies/${studyId}`;

/** Pages a medical writer may open in this study. */
const writerPages = () => [
  `${s()}`,
  `${s()}/plans`,
  `${s()}/plans/${planVersionId}`,
  `${s()}/reruns`,
  `${s()}/reruns/${signedRerunId}`,
  `${s()}/reruns/${childRerunId}`,
  `${s()}/reruns/${unsignedRerunId}`,
  `${s()}/deviations`,
  `${s()}/appendix`,
  `${s()}/reports`,
  `${s()}/reports/${signedRerunId}`,
];
/** Pages a sponsor reader may open. */
const sponsorPages = () => [`${s()}`, `${s()}/reports`, `${s()}/reports/${signedRerunId}`];
const apiPaths = () => [
  `/api/v1/studies`,
  `/api/v1/studies/${studyId}`,
  `/api/v1/studies/${studyId}/plan-versions`,
  `/api/v1/studies/${studyId}/plan-versions/${planVersionId}`,
  `/api/v1/studies/${studyId}/reruns`,
  `/api/v1/studies/${studyId}/reruns/${signedRerunId}`,
  `/api/v1/studies/${studyId}/reruns/${childRerunId}`,
  `/api/v1/studies/${studyId}/reruns/${unsignedRerunId}`,
  `/api/v1/studies/${studyId}/deviations`,
  `/api/v1/studies/${studyId}/appendices`,
];

describe("the data behind the answers names subjects (so the checks below can fail)", () => {
  it("a biostatistician's results page, figure answers, deviation log and API answer name subjects", async () => {
    const page = await (await get(`${s()}/reruns/${signedRerunId}`, "biostatistician")).text();
    expect(namedIn(page).length).toBeGreaterThan(0);
    const figures = figureUrlsOf(page);
    expect(figures.length).toBeGreaterThanOrEqual(5);
    const withIds = await Promise.all(
      figures.map(async (u) => namedIn(await (await get(u, "biostatistician")).text()).length > 0),
    );
    expect(withIds.filter(Boolean).length).toBeGreaterThanOrEqual(5);
    expect(namedIn(await (await get(`${s()}/deviations`, "biostatistician")).text()).length).toBeGreaterThan(
      0,
    );
    expect(
      namedIn(
        await (
          await get(`/api/v1/studies/${studyId}/reruns/${signedRerunId}`, "biostatistician", true)
        ).text(),
      ).length,
    ).toBeGreaterThan(0);
  }, 120_000);
});

describe("roles without dataset.rows receive no subject id and no subject-level row", () => {
  for (const who of ["medical_writer", "sponsor_reader"] as const) {
    it(`${who}: every page, as a document and as a client data request`, async () => {
      const pages = who === "medical_writer" ? writerPages() : sponsorPages();
      for (const url of pages) {
        for (const suffix of ["", ".data"]) {
          const at = url.includes("?") ? url.replace("?", `${suffix}?`) : `${url}${suffix}`;
          const res = await get(at, who);
          const body = await res.text();
          expect(`${at} ${res.status}`).toBe(`${at} 200`);
          expect(namedIn(body), `${at} names subjects`).toEqual([]);
        }
      }
    }, 120_000);
  }

  it("medical_writer: every figure answer of every rerun has no subject id and no data row", async () => {
    const urls = new Set<string>();
    for (const r of [signedRerunId, childRerunId, unsignedRerunId]) {
      for (const u of figureUrlsOf(await (await get(`${s()}/reruns/${r}`, "medical_writer")).text()))
        urls.add(u);
    }
    expect(urls.size).toBeGreaterThanOrEqual(15);
    for (const url of urls) {
      const res = await get(url, "medical_writer");
      const body = await res.text();
      expect(`${url} ${res.status}`).toBe(`${url} 200`);
      expect(namedIn(body), `${url} names subjects`).toEqual([]);
      expect(subjectRowsIn(JSON.parse(body)).slice(0, 2), `${url} has subject-level points`).toEqual([]);
    }
  }, 120_000);

  for (const who of ["medical_writer", "sponsor_reader"] as const) {
    it(`${who}: every API answer`, async () => {
      for (const url of apiPaths()) {
        const res = await get(url, who, true);
        const body = await res.text();
        // a sponsor reader is refused plans (403) and the unpublished rerun (404), as on the pages
        expect([200, 403, 404], url).toContain(res.status);
        expect(namedIn(body), `${url} names subjects`).toEqual([]);
        expect(subjectRowsIn(JSON.parse(body)), `${url} has subject-level entries`).toEqual([]);
      }
    }, 120_000);

    it(`${who}: the exported Word appendix, from the page and from the API`, async () => {
      for (const [url, api] of [
        [`${s()}/appendix/download?id=${appendixId}`, false],
        [`/api/v1/studies/${studyId}/appendices/${appendixId}/file`, true],
      ] as const) {
        const res = await get(url, who, api);
        expect(`${url} ${res.status}`).toBe(`${url} 200`);
        const text = await docxText(await res.arrayBuffer());
        expect(text).toContain("Source records of");
        expect(namedIn(text), `${url} names subjects`).toEqual([]);
      }
    }, 120_000);
  }

  it("the stored notifications name no subject", async () => {
    const rs = await testDb(stack).execute({
      sql: "SELECT subject, text_body AS body_text, html_body AS body_html FROM mail_outbox WHERE study_id = ?",
      args: [studyId],
    });
    expect(rs.rows.length).toBeGreaterThan(0);
    for (const m of rs.rows) expect(namedIn(`${m.subject}\n${m.body_text}\n${m.body_html}`)).toEqual([]);
  });
});

describe("caching and content sniffing", () => {
  it("answers with subject rows are never stored: dataset preview and rows, the results page for people who see subjects, figure answers", async () => {
    const dm = await sessionCookieFor(stack, EMAIL.data_manager);
    for (const url of [
      `${s()}/datasets/${datasetVersionId}`,
      `${s()}/datasets/${datasetVersionId}.data`,
      `${s()}/datasets/${datasetVersionId}/rows`,
    ]) {
      const res = await fetch(`${stack.appUrl}${url}`, { headers: { Cookie: dm } });
      expect(`${url} ${res.status}`).toBe(`${url} 200`);
      expect(res.headers.get("Cache-Control"), url).toMatch(/no-store/);
      await res.body?.cancel();
    }
    for (const url of [`${s()}/reruns/${signedRerunId}`, `${s()}/reruns/${signedRerunId}.data`]) {
      const res = await get(url, "biostatistician");
      expect(res.headers.get("Cache-Control"), url).toMatch(/no-store/);
      await res.body?.cancel();
    }
    const page = await (await get(`${s()}/reruns/${signedRerunId}`, "biostatistician")).text();
    const fig = figureUrlsOf(page)[0];
    const res = await get(fig, "biostatistician");
    expect(res.headers.get("Cache-Control")).toMatch(/no-store/);
    await res.body?.cancel();
  });

  it("static assets carry X-Content-Type-Options: nosniff", async () => {
    const html = await (await fetch(`${stack.appUrl}/sign-in`)).text();
    const assets = [...html.matchAll(/(?:src|href)="(\/assets\/[^"]+)"/g)].map((m) => m[1]);
    expect(assets.length).toBeGreaterThan(0);
    for (const a of [...new Set(assets)].slice(0, 4)) {
      const res = await fetch(`${stack.appUrl}${a}`);
      expect(`${a} ${res.status}`).toBe(`${a} 200`);
      expect(res.headers.get("X-Content-Type-Options"), a).toBe("nosniff");
      await res.body?.cancel();
    }
    const icon = await fetch(`${stack.appUrl}/favicon.svg`);
    expect(icon.headers.get("X-Content-Type-Options")).toBe("nosniff");
  });
});
