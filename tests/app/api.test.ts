/**
 * The public API on the running server: answers with a token, refuses without one, refuses a
 * revoked or expired token, never lets a token exceed its person's study roles, keeps subject
 * identifiers from sponsor readers, limits the rate per token, and matches its OpenAPI
 * document: every API route file has a documented path and every documented path a route,
 * and every real answer below validates against the document's schema for its status
 * (Ajv, JSON Schema 2020-12; the document itself against the OpenAPI 3.1 schema).
 *
 * The study these tests read (API-301) is made here through the services on the stack's
 * database, so the demo study stays as the other app tests expect it.
 */
import { createHash } from "node:crypto";
import { readdirSync } from "node:fs";
import path from "node:path";
import { Validator } from "@seriousme/openapi-schema-validator";
import Ajv2020 from "ajv/dist/2020.js";
import addFormats from "ajv-formats";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import routes from "../../app/routes";
import { sessionCookieFor, testDb } from "../support/sessions";
import { storedResultOnStack } from "../support/stored-result";

const stack = inject("stack");
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");

const CAUTION = "Results support, but do not replace, qualified statistical and medical review.";
const EMAIL = {
  admin: "morgan.reyes@plumbline.example",
  data_manager: "dana.okafor@plumbline.example",
  biostatistician: "priya.lindqvist@plumbline.example",
  second_biostatistician: "tomas.berg@plumbline.example",
  medical_writer: "helen.achter@plumbline.example",
  sponsor_reader: "sam.quill@quillmoor.example",
} as const;
type Who = keyof typeof EMAIL;

type Doc = {
  paths: Record<string, Record<string, { responses: Record<string, { content?: Record<string, unknown> }> }>>;
};
let doc: Doc;
let ajv: InstanceType<typeof Ajv2020>;
const validated = new Set<string>();

let studyId = "";
let datasetId = "";
let datasetVersionId = "";
let planVersionId = "";
let signedRerunId = "";
let unsignedRerunId = "";
let appendixId = "";
let subjectIds: string[] = [];
const token: Partial<Record<Who, string>> = {};

/** GET with a bearer token (or none), returning the parsed body after checking it against the document. */
async function call(template: string, who: Who | null, params: Record<string, string> = {}, raw?: string) {
  const url = template.replace(
    /\{(\w+)\}/g,
    (_m, k: string) => params[k] ?? (k === "studyId" ? studyId : "x"),
  );
  const headers: Record<string, string> = {};
  const bearer = raw ?? (who ? token[who] : undefined);
  if (bearer) headers.Authorization = `Bearer ${bearer}`;
  const res = await fetch(`${stack.appUrl}${url}`, { headers, redirect: "manual" });
  const text = await res.text();
  const body = JSON.parse(text) as Record<string, unknown>;
  expect(res.headers.get("Content-Type")).toMatch(/^application\/json/);
  expect(body.caution).toBe(CAUTION);
  conforms(template, res.status, body);
  return { status: res.status, body, text, headers: res.headers };
}

/** Validates an answer against the document's schema for this path and status. */
function conforms(template: string, status: number, body: unknown): void {
  const pointer = `/paths/${template.replace(/~/g, "~0").replace(/\//g, "~1")}/get/responses/${status}/content/application~1json/schema`;
  expect(
    doc.paths[template]?.get?.responses[String(status)],
    `${template} documents no ${status} answer`,
  ).toBeDefined();
  const validate =
    ajv.getSchema(`openapi.json#${pointer}`) ?? ajv.compile({ $ref: `openapi.json#${pointer}` });
  const ok = validate(body);
  expect(ok, `${template} ${status}: ${JSON.stringify(validate.errors?.slice(0, 3))}`).toBe(true);
  validated.add(`${template} ${status}`);
}

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

/** A second study with a signed (published) rerun and an unsigned one, made as the pages would. */
async function makeApiStudy(): Promise<void> {
  const { db, t } = await import("~/.server/db/index.server");
  const { eq } = await import("drizzle-orm");
  const { createStudy } = await import("~/.server/studies.server");
  const { setStudyRole } = await import("~/.server/people.server");
  const { seedDemoDataset } = await import("~/.server/datasets/demo-seed.server");
  const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
  const plans = await import("~/.server/plans/plans.server");
  const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
  const reruns = await import("~/.server/reruns/reruns.server");
  const findings = await import("~/.server/reruns/findings.server");
  const { runOneJob } = await import("~/.server/jobs/jobs.server");
  (await import("~/.server/background.server")).registerJobHandlers();
  const { createToken } = await import("~/.server/api/tokens.server");
  const person = async (email: string) => {
    const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
    return { id: p.id, name: p.displayName, organisation: p.organisation };
  };
  const who = Object.fromEntries(
    await Promise.all(Object.entries(EMAIL).map(async ([k, e]) => [k, await person(e)])),
  ) as Record<Who, { id: string; name: string; organisation: string | null }>;
  const created = await createStudy(who.admin, {
    code: "API-301",
    title: "Study read through the API",
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
  const [dv] = await db.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, datasetVersionId));
  datasetId = dv.datasetId;

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
  const plannedModelId = await plans.savePlannedModel(priya, studyId, planVersionId, 1, null, v.model);
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
  subjectIds = (primary.doc!.result.observations.id as readonly (string | null)[]).filter(
    (x): x is string => x !== null,
  );
  // the planned robust-errors analysis was queued when the primary completed
  const [child] = await reruns.sensitivityReruns(signedRerunId);
  await finish(child.id);
  for (const f of await findings.findingsOf(signedRerunId)) {
    await findings.assessFinding(priya, studyId, f.id, {
      category: "model_assumption",
      impact: "none",
      action: "planned_sensitivity",
      rationale: "The planned sensitivity analyses leave the treatment conclusion unchanged.",
    });
  }
  await findings.signRerun(
    { ...who.second_biostatistician, signedInAt: new Date().toISOString() },
    studyId,
    signedRerunId,
  );
  const { exportAppendix } = await import("~/.server/appendix/appendix.server");
  appendixId = (await exportAppendix(who.medical_writer, studyId, { kind: "rerun", rerunId: signedRerunId }))
    .id;
  unsignedRerunId = await reruns.startRerun(priya, studyId, {
    plannedModelId,
    datasetVersionId,
    options: { variant: "planned" },
  });
  await finish(unsignedRerunId);

  for (const k of ["admin", "data_manager", "biostatistician", "medical_writer", "sponsor_reader"] as const) {
    const made = await createToken(who[k], { name: `${k} pipeline`, days: 7 });
    if (!made.ok) throw new Error(made.message);
    token[k] = made.token;
  }
}

beforeAll(async () => {
  const res = await fetch(`${stack.appUrl}/api/v1/openapi.json`);
  expect(res.status).toBe(200);
  doc = (await res.json()) as Doc;
  ajv = new Ajv2020({ strict: false, allErrors: true });
  addFormats(ajv);
  ajv.addSchema(doc, "openapi.json");
  await makeApiStudy();
}, 180_000);

describe("the OpenAPI document", () => {
  it("is a valid OpenAPI 3.1 document that carries the caution", async () => {
    const result = await new Validator().validate(doc as unknown as Parameters<Validator["validate"]>[0]);
    expect(result.errors ?? []).toEqual([]);
    expect(result.valid).toBe(true);
    expect((doc as unknown as { openapi: string }).openapi).toBe("3.1.0");
    expect((doc as unknown as Record<string, unknown>)["x-caution"]).toBe(CAUTION);
  });

  it("has a path for every API route file and a route for every path", () => {
    type Entry = { path?: string; file: string; children?: Entry[] };
    const flat: { path: string; file: string }[] = [];
    const walk = (list: Entry[], base: string) => {
      for (const e of list) {
        const p = e.path === undefined ? base : `${base}/${e.path}`.replace(/\/+/g, "/");
        flat.push({ path: p, file: e.file });
        if (e.children) walk(e.children, p);
      }
    };
    walk(routes as Entry[], "");
    const apiRoutes = flat.filter((r) => /^routes\/api\.v1\./.test(r.file) && !r.path.endsWith("*"));
    const files = readdirSync("app/routes").filter(
      (f) => /^api\.v1\..+\.ts$/.test(f) && f !== "api.v1.not-found.ts",
    );
    // Every route file is routed (the JSON not-found for unknown API paths is the one file without a documented path).
    expect(files.map((f) => `routes/${f}`).sort()).toEqual(apiRoutes.map((r) => r.file).sort());
    const routed = apiRoutes.map((r) => r.path.replace(/:(\w+)/g, "{$1}")).sort();
    expect(Object.keys(doc.paths).sort()).toEqual(routed);
  });
});

describe("authentication", () => {
  it("refuses a request without a token with 401 JSON, even with a signed-in browser's cookie", async () => {
    const anonymous = await call("/api/v1/studies", null);
    expect(anonymous.status).toBe(401);
    expect(anonymous.body.error).toMatchObject({
      code: "unauthorized",
      message: expect.stringMatching(/Authorization: Bearer/),
    });
    expect(anonymous.headers.get("WWW-Authenticate")).toMatch(/^Bearer/);
    const cookie = await sessionCookieFor(stack, EMAIL.biostatistician);
    const res = await fetch(`${stack.appUrl}/api/v1/studies`, { headers: { Cookie: cookie } });
    expect(res.status).toBe(401);
    expect(((await res.json()) as { error: { message: string } }).error.message).toMatch(
      /browser session does not authenticate/,
    );
  });

  it("refuses an unknown, a revoked and an expired token", async () => {
    const unknown = await call("/api/v1/studies", null, {}, "plb_not-a-real-token");
    expect(unknown.status).toBe(401);
    const { createToken, revokeToken } = await import("~/.server/api/tokens.server");
    const { db, t } = await import("~/.server/db/index.server");
    const { eq } = await import("drizzle-orm");
    const [priya] = await db.select().from(t.people).where(eq(t.people.email, EMAIL.biostatistician));
    const actor = { id: priya.id, name: priya.displayName };
    const revoked = await createToken(actor, { name: "to revoke", days: 7 });
    const expired = await createToken(actor, { name: "to expire", days: 7 });
    if (!revoked.ok || !expired.ok) throw new Error("token not created");
    expect((await call("/api/v1/studies", null, {}, revoked.token)).status).toBe(200);
    await revokeToken(actor, revoked.row.id, "owner");
    const r = await call("/api/v1/studies", null, {}, revoked.token);
    expect(r.status).toBe(401);
    expect((r.body.error as { message: string }).message).toMatch(/was revoked/);
    await testDb(stack).execute({
      sql: "UPDATE api_tokens SET expires_at = ? WHERE id = ?",
      args: [new Date(Date.now() - 1000).toISOString(), expired.row.id],
    });
    const e = await call("/api/v1/studies", null, {}, expired.token);
    expect(e.status).toBe(401);
    expect((e.body.error as { message: string }).message).toMatch(/expired/);
    // Only the hash is stored.
    const rows = await testDb(stack).execute({
      sql: "SELECT token_hash, prefix FROM api_tokens WHERE id = ?",
      args: [revoked.row.id],
    });
    expect(rows.rows[0].token_hash).toMatch(/^[0-9a-f]{64}$/);
    expect(String(rows.rows[0].token_hash)).not.toContain(revoked.token.slice(4));
    expect(revoked.token.startsWith(String(rows.rows[0].prefix))).toBe(true);
  });
});

describe("a token acts with its person's study roles, never more", () => {
  it("biostatistician: every endpoint answers, with subject ids on flagged subjects", async () => {
    const studies = await call("/api/v1/studies", "biostatistician");
    expect(studies.status).toBe(200);
    expect(
      (studies.body.studies as { code: string; role: string }[]).find((s) => s.code === "API-301")?.role,
    ).toBe("biostatistician");
    expect((await call("/api/v1/studies/{studyId}", "biostatistician")).status).toBe(200);
    const datasets = await call("/api/v1/studies/{studyId}/datasets", "biostatistician");
    expect(datasets.status).toBe(200);
    expect(datasets.text).not.toContain(subjectIds[0]);
    const version = await call(
      "/api/v1/studies/{studyId}/datasets/{datasetId}/versions/{versionId}",
      "biostatistician",
      { datasetId, versionId: datasetVersionId },
    );
    expect(version.status).toBe(200);
    expect(version.text).not.toContain(subjectIds[0]); // metadata only: never rows, never the subject column's values
    expect((await call("/api/v1/studies/{studyId}/plan-versions", "biostatistician")).status).toBe(200);
    const plan = await call("/api/v1/studies/{studyId}/plan-versions/{versionId}", "biostatistician", {
      versionId: planVersionId,
    });
    expect((plan.body.plannedModels as { spec: { response: string } }[])[0].spec.response).toBe("chg");
    const list = await call("/api/v1/studies/{studyId}/reruns", "biostatistician");
    expect((list.body.reruns as { id: string }[]).map((r) => r.id)).toEqual(
      expect.arrayContaining([signedRerunId, unsignedRerunId]),
    );
    const rerun = await call("/api/v1/studies/{studyId}/reruns/{rerunId}", "biostatistician", {
      rerunId: signedRerunId,
    });
    const cooks = (rerun.body.checks as { key: string; flagged: { subjectId?: string }[] }[]).find(
      (c) => c.key === "cooks_distance",
    )!;
    expect(subjectIds).toContain(cooks.flagged[0].subjectId);
    expect((await call("/api/v1/studies/{studyId}/deviations", "biostatistician")).status).toBe(200);
    expect((await call("/api/v1/studies/{studyId}/appendices", "biostatistician")).status).toBe(200);
  });

  it("the rerun's numbers are the stored result's", async () => {
    const stored = JSON.parse(await storedResultOnStack(stack, signedRerunId)) as {
      result: {
        contrasts: { label: string; estimate: number; p: number }[];
        coefficients: { name: string; estimate: number }[];
      };
    };
    const { body } = await call("/api/v1/studies/{studyId}/reruns/{rerunId}", "biostatistician", {
      rerunId: signedRerunId,
    });
    const results = body.results as {
      contrasts: { label: string; estimate: number; p: number }[];
      coefficients: { name: string; estimate: number }[];
    };
    expect(results.contrasts.map((c) => [c.label, c.estimate, c.p])).toEqual(
      stored.result.contrasts.map((c) => [c.label, c.estimate, c.p]),
    );
    expect(results.coefficients.map((c) => c.estimate)).toEqual(
      stored.result.coefficients.map((c) => c.estimate),
    );
    // names as "VAR: LEVEL", the family in words, and every computed check with its numbers beside its texts
    expect(
      (body.results as { coefficients: { name: string }[] }).coefficients
        .map((c) => c.name)
        .filter((n) => n.includes("=")),
    ).toEqual([]);
    expect(
      (body.results as { coefficients: { name: string; term: string | null }[] }).coefficients.some(
        (c) => c.term !== null && c.name.startsWith(`${c.term}: `),
      ),
    ).toBe(true);
    expect((body.results as { familyLabel: string }).familyLabel).toBe("Normal (identity link)");
    const checks = body.checks as {
      key: string;
      outcome: string;
      statistic: string;
      numbers: { statistic: number | null; threshold: number; compares: string; p: number | null } | null;
    }[];
    for (const c of checks.filter((x) => x.outcome !== "not_computed")) {
      expect(c.numbers, c.key).not.toBeNull();
      expect(typeof c.numbers!.threshold, c.key).toBe("number");
      if (c.numbers!.compares === "p below") expect(typeof c.numbers!.p, c.key).toBe("number");
      expect(c.statistic, c.key).not.toMatch(/\b(W|BP) = /);
    }
    expect((body.rerun as { publishedAt: string | null }).publishedAt).not.toBeNull();
    expect((body.signatures as unknown[]).length).toBe(1);
    expect((body.sensitivity as unknown[]).length).toBe(1);
  });

  it("medical writer: 403 on dataset endpoints; reruns without subject ids", async () => {
    const datasets = await call("/api/v1/studies/{studyId}/datasets", "medical_writer");
    expect(datasets.status).toBe(403);
    expect(datasets.body.error).toMatchObject({
      code: "forbidden",
      message: expect.stringMatching(/data manager or biostatistician role/),
    });
    expect(
      (
        await call("/api/v1/studies/{studyId}/datasets/{datasetId}/versions/{versionId}", "medical_writer", {
          datasetId,
          versionId: datasetVersionId,
        })
      ).status,
    ).toBe(403);
    expect((await call("/api/v1/studies/{studyId}/plan-versions", "medical_writer")).status).toBe(200);
    const rerun = await call("/api/v1/studies/{studyId}/reruns/{rerunId}", "medical_writer", {
      rerunId: signedRerunId,
    });
    expect(rerun.status).toBe(200);
    for (const id of subjectIds) expect(rerun.text).not.toContain(id);
  });

  it("sponsor reader: only published reruns, never a subject id, no datasets or plans", async () => {
    const list = await call("/api/v1/studies/{studyId}/reruns", "sponsor_reader");
    const ids = list.body.reruns as { id: string; publishedAt: string | null }[];
    expect(ids.map((r) => r.id)).toContain(signedRerunId);
    expect(ids.map((r) => r.id)).not.toContain(unsignedRerunId);
    expect(ids.every((r) => r.publishedAt !== null)).toBe(true);
    expect(
      (
        await call("/api/v1/studies/{studyId}/reruns/{rerunId}", "sponsor_reader", {
          rerunId: unsignedRerunId,
        })
      ).status,
    ).toBe(404);
    const rerun = await call("/api/v1/studies/{studyId}/reruns/{rerunId}", "sponsor_reader", {
      rerunId: signedRerunId,
    });
    expect(rerun.status).toBe(200);
    for (const id of subjectIds) expect(rerun.text).not.toContain(id);
    const cooks = (
      rerun.body.checks as {
        key: string;
        flaggedCount: number;
        flagged: { rank: number; subjectId?: string }[];
      }[]
    ).find((c) => c.key === "cooks_distance")!;
    expect(cooks.flaggedCount).toBeGreaterThan(0);
    expect(cooks.flagged[0]).toEqual({ rank: 1, value: expect.any(Number) });
    const deviations = await call("/api/v1/studies/{studyId}/deviations", "sponsor_reader");
    expect(deviations.status).toBe(200);
    for (const id of subjectIds) expect(deviations.text).not.toContain(id);
    expect(
      (deviations.body.deviations as { rerun: { id: string } | null }[]).every(
        (d) => d.rerun?.id === signedRerunId,
      ),
    ).toBe(true);
    expect((await call("/api/v1/studies/{studyId}/datasets", "sponsor_reader")).status).toBe(403);
    expect((await call("/api/v1/studies/{studyId}/plan-versions", "sponsor_reader")).status).toBe(403);
    expect(
      (
        await call("/api/v1/studies/{studyId}/plan-versions/{versionId}", "sponsor_reader", {
          versionId: planVersionId,
        })
      ).status,
    ).toBe(403);
  });

  it("data manager: datasets yes, reruns and plans no", async () => {
    expect((await call("/api/v1/studies/{studyId}/datasets", "data_manager")).status).toBe(200);
    expect((await call("/api/v1/studies/{studyId}/reruns", "data_manager")).status).toBe(403);
    expect(
      (await call("/api/v1/studies/{studyId}/reruns/{rerunId}", "data_manager", { rerunId: signedRerunId }))
        .status,
    ).toBe(403);
    expect((await call("/api/v1/studies/{studyId}/deviations", "data_manager")).status).toBe(403);
    expect(
      (
        await call("/api/v1/studies/{studyId}/plan-versions/{versionId}", "data_manager", {
          versionId: planVersionId,
        })
      ).status,
    ).toBe(403);
  });

  it("administrator: being an administrator gives a token no study", async () => {
    const studies = await call("/api/v1/studies", "admin");
    expect(studies.body.studies).toEqual([]);
    expect((await call("/api/v1/studies/{studyId}", "admin")).status).toBe(403);
  });

  it("unknown ids and studies answer not_found", async () => {
    expect(
      (await call("/api/v1/studies/{studyId}", "biostatistician", { studyId: "no-such-study" })).status,
    ).toBe(404);
    expect(
      (
        await call("/api/v1/studies/{studyId}/reruns/{rerunId}", "biostatistician", {
          rerunId: "no-such-rerun",
        })
      ).status,
    ).toBe(404);
    expect(
      (
        await call("/api/v1/studies/{studyId}/plan-versions/{versionId}", "biostatistician", {
          versionId: "no-such-version",
        })
      ).status,
    ).toBe(404);
    expect(
      (
        await call("/api/v1/studies/{studyId}/datasets/{datasetId}/versions/{versionId}", "biostatistician", {
          datasetId: "other",
          versionId: datasetVersionId,
        })
      ).status,
    ).toBe(404);
    const file = await call("/api/v1/studies/{studyId}/appendices/{appendixId}/file", "medical_writer", {
      appendixId: "no-such-export",
    });
    expect(file.body.error).toMatchObject({ code: "not_found" });
    const res = await fetch(`${stack.appUrl}/api/v1/no/such/endpoint`);
    expect(res.status).toBe(404);
    expect(((await res.json()) as { error: { code: string } }).error.code).toBe("not_found");
  });

  it("is read-only: other methods get a JSON 405", async () => {
    const res = await fetch(`${stack.appUrl}/api/v1/studies`, {
      method: "POST",
      headers: { Authorization: `Bearer ${token.biostatistician}` },
      body: "{}",
    });
    expect(res.status).toBe(405);
    expect(((await res.json()) as { error: { code: string } }).error.code).toBe("method_not_allowed");
  });
});

describe("appendix download", () => {
  it("streams the stored .docx with its recorded SHA-256 to the medical writer and the sponsor reader, never to a data manager", async () => {
    const list = await call("/api/v1/studies/{studyId}/appendices", "sponsor_reader");
    const entry = (list.body.appendices as { id: string; sha256: string; download: string }[]).find(
      (a) => a.id === appendixId,
    )!;
    expect(entry).toBeDefined();
    for (const who of ["medical_writer", "sponsor_reader"] as const) {
      const res = await fetch(`${stack.appUrl}${entry.download}`, {
        headers: { Authorization: `Bearer ${token[who]}` },
      });
      expect(res.status).toBe(200);
      expect(res.headers.get("Content-Type")).toBe(
        "application/vnd.openxmlformats-officedocument.wordprocessingml.document",
      );
      expect(res.headers.get("X-Caution")).toBe(CAUTION);
      const bytes = Buffer.from(await res.arrayBuffer());
      expect(createHash("sha256").update(bytes).digest("hex")).toBe(entry.sha256);
      expect(bytes.subarray(0, 2).toString()).toBe("PK");
    }
    const refused = await call("/api/v1/studies/{studyId}/appendices/{appendixId}/file", "data_manager", {
      appendixId,
    });
    expect(refused.status).toBe(403);
    expect(
      (await call("/api/v1/studies/{studyId}/appendices/{appendixId}/file", null, { appendixId })).status,
    ).toBe(401);
  });
});

describe("rate limit", () => {
  it("gives 429 with Retry-After after 60 requests a minute with one token", async () => {
    const { createToken } = await import("~/.server/api/tokens.server");
    const { db, t } = await import("~/.server/db/index.server");
    const { eq } = await import("drizzle-orm");
    const [helen] = await db.select().from(t.people).where(eq(t.people.email, EMAIL.medical_writer));
    const made = await createToken({ id: helen.id, name: helen.displayName }, { name: "burst", days: 7 });
    if (!made.ok) throw new Error(made.message);
    // The bucket holds 60 and refills one a second: count the answers before the first refusal.
    const started = Date.now();
    let allowed = 0;
    let refused: Response;
    for (;;) {
      const res = await fetch(`${stack.appUrl}/api/v1/studies`, {
        headers: { Authorization: `Bearer ${made.token}` },
      });
      if (res.status !== 200) {
        refused = res;
        break;
      }
      await res.arrayBuffer();
      allowed++;
      if (allowed > 200) throw new Error("No 429 after 200 requests: the rate limit is not applied.");
    }
    const refills = Math.ceil((Date.now() - started) / 1000);
    expect(allowed).toBeGreaterThanOrEqual(60);
    expect(allowed).toBeLessThanOrEqual(60 + refills);
    expect(refused.status).toBe(429);
    expect(((await refused.json()) as { error: unknown }).error).toMatchObject({ code: "rate_limited" });
    expect(Number(refused.headers.get("Retry-After"))).toBeGreaterThanOrEqual(1);
    // Another token of the same person has its own bucket.
    expect((await call("/api/v1/studies", "medical_writer")).status).toBe(200);
  });
});

describe("tokens on the profile page and the administrators' API clients page", () => {
  it("shows a new token once, audits its creation and revocation, and the administrator can revoke any token", async () => {
    const cookie = await sessionCookieFor(stack, EMAIL.data_manager);
    const post = (p: string, c: string, body: Record<string, string>) =>
      fetch(`${stack.appUrl}${p}`, {
        method: "POST",
        redirect: "manual",
        headers: { Cookie: c, Origin: stack.appUrl, "Content-Type": "application/x-www-form-urlencoded" },
        body: new URLSearchParams(body),
      });
    const bad = await post("/profile", cookie, { intent: "create", name: "x", days: "12" });
    expect(bad.status).toBe(400);
    const html = await (
      await post("/profile", cookie, { intent: "create", name: "Nightly dataset check", days: "30" })
    ).text();
    const plain = /plb_[A-Za-z0-9_-]{43}/.exec(html)?.[0];
    expect(plain).toBeDefined();
    expect((await call("/api/v1/studies/{studyId}/datasets", null, {}, plain)).status).toBe(200);
    // The profile page lists it by prefix only, never the token again.
    const page = await (await fetch(`${stack.appUrl}/profile`, { headers: { Cookie: cookie } })).text();
    expect(page).toContain("Nightly dataset check");
    expect(page).toContain(plain!.slice(0, 12));
    expect(page).not.toContain(plain);
    const row = await testDb(stack).execute({
      sql: "SELECT id FROM api_tokens WHERE name = 'Nightly dataset check'",
      args: [],
    });
    const tokenId = String(row.rows[0].id);
    // Someone else's token cannot be revoked from one's own profile.
    const other = await post("/profile", await sessionCookieFor(stack, EMAIL.medical_writer), {
      intent: "revoke",
      tokenId,
    });
    expect(other.status).toBe(404);
    // Administrators see every token with its owner, and may revoke it.
    const admin = await sessionCookieFor(stack, EMAIL.admin);
    const list = await (
      await fetch(`${stack.appUrl}/admin/api-clients`, { headers: { Cookie: admin } })
    ).text();
    expect(list).toContain("Nightly dataset check");
    expect(list).toContain("Dana Okafor");
    expect((await post("/admin/api-clients", cookie, { tokenId })).status).toBe(403);
    expect((await post("/admin/api-clients", admin, { tokenId })).status).toBe(200);
    expect((await call("/api/v1/studies", null, {}, plain)).status).toBe(401);
    const audit = await testDb(stack).execute({
      sql: "SELECT action, actor_name, after_json FROM audit_events WHERE entity_id = ? ORDER BY seq",
      args: [tokenId],
    });
    expect(audit.rows.map((r) => r.action)).toEqual(["token.create", "token.revoke"]);
    expect(audit.rows[1].actor_name).toBe("Morgan Reyes");
    for (const r of audit.rows) expect(String(r.after_json)).not.toContain(plain!.slice(12));
  });
});

afterAll(() => {
  // Every documented JSON endpoint was answered for real and checked against its schema.
  const documented = Object.keys(doc?.paths ?? {}).filter(
    (p) => p !== "/api/v1/openapi.json" && !p.endsWith("/file"),
  );
  for (const p of documented)
    expect(validated.has(`${p} 200`), `${p} was never answered with 200 in these tests`).toBe(true);
});
