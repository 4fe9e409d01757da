/**
 * The authorization matrix: every route, for anonymous visitors and for each role of the demo
 * study, against the running server. The expected answers are written out here by hand from
 * DESIGN.md's table of roles, not derived from the permissions module, so a wrong rule fails.
 */
import { readdirSync } from "node:fs";
import { beforeAll, describe, expect, inject, it } from "vitest";
import { sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");

const PEOPLE = {
  admin: "morgan.reyes@plumbline.example",
  data_manager: "dana.okafor@plumbline.example",
  biostatistician: "priya.lindqvist@plumbline.example",
  medical_writer: "helen.achter@plumbline.example",
  sponsor_reader: "sam.quill@quillmoor.example",
} as const;
type Who = "anonymous" | keyof typeof PEOPLE;
const WHO: Who[] = [
  "anonymous",
  "admin",
  "data_manager",
  "biostatistician",
  "medical_writer",
  "sponsor_reader",
];

// 200 allowed, 403 forbidden, 404 not found, "in" = redirected to sign-in, "home" = redirected to /.
// 401: the API's answer without a bearer token (session cookies never authenticate API requests).
type Outcome = 200 | 401 | 403 | 404 | "in" | "home";
/** Columns in WHO order: anonymous, admin, data manager, biostatistician, medical writer, sponsor reader. */
const MATRIX: { file: string; path: string; expect: Outcome[]; resource?: true }[] = [
  { file: "home.tsx", path: "/", expect: ["in", 200, 200, 200, 200, 200] },
  { file: "study-overview.tsx", path: "/studies/:s", expect: ["in", 403, 200, 200, 200, 200] },
  { file: "study-datasets.tsx", path: "/studies/:s/datasets", expect: ["in", 403, 200, 200, 403, 403] },
  {
    file: "study-datasets-upload.ts",
    path: "/studies/:s/datasets/upload",
    expect: ["in", 403, 200, 403, 403, 403],
    resource: true,
  },
  {
    file: "study-dataset-version.tsx",
    path: "/studies/:s/datasets/:v",
    expect: ["in", 403, 200, 200, 403, 403],
  },
  {
    file: "study-dataset-rows.ts",
    path: "/studies/:s/datasets/:v/rows",
    expect: ["in", 403, 200, 200, 403, 403],
    resource: true,
  },
  { file: "study-plans.tsx", path: "/studies/:s/plans", expect: ["in", 403, 403, 200, 200, 403] },
  { file: "study-reruns.tsx", path: "/studies/:s/reruns", expect: ["in", 403, 403, 200, 200, 403] },
  {
    file: "study-plan-version.tsx",
    path: "/studies/:s/plans/no-such-version",
    expect: ["in", 403, 403, 404, 404, 403],
  },
  {
    file: "study-planned-model.tsx",
    path: "/studies/:s/plans/no-such-version/models/new",
    expect: ["in", 403, 403, 404, 403, 403],
  },
  {
    file: "study-rerun.tsx",
    path: "/studies/:s/reruns/no-such-rerun",
    expect: ["in", 403, 403, 404, 404, 403],
  },
  {
    file: "study-rerun-figures.ts",
    path: "/studies/:s/reruns/no-such-rerun/figures/qq",
    expect: ["in", 403, 403, 404, 404, 403],
  },
  { file: "study-deviations.tsx", path: "/studies/:s/deviations", expect: ["in", 403, 403, 200, 200, 403] },
  { file: "study-appendix.tsx", path: "/studies/:s/appendix", expect: ["in", 403, 403, 403, 200, 403] },
  {
    file: "study-appendix-download.ts",
    path: "/studies/:s/appendix/download?id=no-such-appendix",
    expect: ["in", 403, 403, 404, 404, 404],
    resource: true,
  },
  { file: "study-reports.tsx", path: "/studies/:s/reports", expect: ["in", 403, 403, 200, 200, 200] },
  {
    file: "study-report.tsx",
    path: "/studies/:s/reports/no-such-rerun",
    expect: ["in", 403, 403, 404, 404, 404],
  },
  { file: "study-layout.tsx", path: "/studies/no-such-study", expect: ["in", 404, 404, 404, 404, 404] },
  { file: "admin.studies.tsx", path: "/admin/studies", expect: ["in", 200, 403, 403, 403, 403] },
  { file: "admin.people.tsx", path: "/admin/people", expect: ["in", 200, 403, 403, 403, 403] },
  { file: "admin.audit.tsx", path: "/admin/audit", expect: ["in", 200, 403, 403, 403, 403] },
  {
    file: "admin.audit-export.ts",
    path: "/admin/audit/export.csv",
    expect: ["in", 200, 403, 403, 403, 403],
    resource: true,
  },
  { file: "admin.outbox.tsx", path: "/admin/outbox", expect: ["in", 200, 403, 403, 403, 403] },
  { file: "profile.tsx", path: "/profile", expect: ["in", 200, 200, 200, 200, 200] },
  { file: "admin.api-clients.tsx", path: "/admin/api-clients", expect: ["in", 200, 403, 403, 403, 403] },
  // The API: a browser session is no credential there, so every role's cookie gets 401 like anonymous.
  {
    file: "api.v1.openapi.ts",
    path: "/api/v1/openapi.json",
    expect: [200, 200, 200, 200, 200, 200],
    resource: true,
  },
  {
    file: "api.v1.studies.ts",
    path: "/api/v1/studies",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.study.ts",
    path: "/api/v1/studies/:s",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.datasets.ts",
    path: "/api/v1/studies/:s/datasets",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.dataset-version.ts",
    path: "/api/v1/studies/:s/datasets/x/versions/:v",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.plan-versions.ts",
    path: "/api/v1/studies/:s/plan-versions",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.plan-version.ts",
    path: "/api/v1/studies/:s/plan-versions/x",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.reruns.ts",
    path: "/api/v1/studies/:s/reruns",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.rerun.ts",
    path: "/api/v1/studies/:s/reruns/x",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.deviations.ts",
    path: "/api/v1/studies/:s/deviations",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.appendices.ts",
    path: "/api/v1/studies/:s/appendices",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.appendix-file.ts",
    path: "/api/v1/studies/:s/appendices/x/file",
    expect: [401, 401, 401, 401, 401, 401],
    resource: true,
  },
  {
    file: "api.v1.not-found.ts",
    path: "/api/v1/no/such/endpoint",
    expect: [404, 404, 404, 404, 404, 404],
    resource: true,
  },
  { file: "sign-in.tsx", path: "/sign-in", expect: [200, "home", "home", "home", "home", "home"] },
  { file: "healthz.ts", path: "/healthz", expect: [200, 200, 200, 200, 200, 200] },
  { file: "not-found.tsx", path: "/no/such/page", expect: [404, 404, 404, 404, 404, 404] },
];

/** Routes that are not pages a role opens; each is tested on its own below or in tests/auth. */
const COVERED_ELSEWHERE = [
  "shell.tsx",
  "auth.saml.login.ts",
  "auth.saml.acs.ts",
  "auth.saml.logout.ts",
  "auth.oidc.login.ts",
  "auth.oidc.callback.ts",
  "sign-out.ts",
];

const cookies = new Map<Who, string>();
let studyId = "";
/** The demo dataset's locked version (the seed uploads and locks adeff v1). */
let versionId = "";
const pathOf = (p: string) => p.replace(":s", studyId).replace(":v", versionId);

beforeAll(async () => {
  studyId = await studyIdByCode(stack, "QMT-301");
  const adeff =
    "SELECT v.id FROM dataset_versions v JOIN datasets d ON d.id = v.dataset_id WHERE d.name = 'adeff' AND v.version = 1";
  versionId = String((await testDb(stack).execute(adeff)).rows[0]?.id ?? "");
  for (const [who, email] of Object.entries(PEOPLE))
    cookies.set(who as Who, await sessionCookieFor(stack, email));
});

async function get(path: string, who: Who, data = false): Promise<Response> {
  const url = `${stack.appUrl}${path}${data ? ".data" : ""}`;
  const headers: Record<string, string> = {};
  const cookie = cookies.get(who);
  if (cookie) headers.Cookie = cookie;
  return fetch(url, { headers, redirect: "manual" });
}

function outcomeOf(res: Response, data: boolean, body = ""): Outcome {
  if (data && res.status === 202) {
    // Data requests answer redirects as 202 with the target in the encoded body.
    const target = /"redirect","([^"]*)"/.exec(body)?.[1] ?? "";
    return target.startsWith("/sign-in") ? "in" : target === "/" ? "home" : (target as never);
  }
  if (res.status === 302 || res.status === 303) {
    const location = new URL(res.headers.get("Location") ?? "", stack.appUrl);
    return location.pathname === "/sign-in"
      ? "in"
      : location.pathname === "/"
        ? "home"
        : (location.pathname as never);
  }
  return res.status as Outcome;
}

describe("every page route answers each role as DESIGN.md says", () => {
  it("covers every route module in app/routes", () => {
    const files = readdirSync("app/routes").filter((f) => /\.tsx?$/.test(f));
    const listed = new Set([...MATRIX.map((m) => m.file), ...COVERED_ELSEWHERE]);
    expect(files.filter((f) => !listed.has(f))).toEqual([]);
  });

  for (const row of MATRIX) {
    for (const [i, who] of WHO.entries()) {
      it(`${row.path} as ${who} → ${row.expect[i]}`, async () => {
        const path = pathOf(row.path);
        const res = await get(path, who);
        expect(outcomeOf(res, false)).toBe(row.expect[i]);
        if (res.status === 403) expect(await res.text()).toMatch(/you need the .+ role/);
        if (res.status === 401) expect((await res.json()).error.code).toBe("unauthorized");
      });
    }
  }

  it("client-side data requests get the same answers as documents", async () => {
    for (const row of MATRIX.filter((r) => r.path.startsWith("/studies/:s/") && !r.resource)) {
      for (const [i, who] of WHO.entries()) {
        const res = await get(pathOf(row.path), who, true);
        const body = await res.text();
        expect(`${row.path} ${who} ${outcomeOf(res, true, body)}`).toBe(
          `${row.path} ${who} ${row.expect[i]}`,
        );
        if (row.expect[i] === "in")
          expect(body).toContain(`returnTo=${encodeURIComponent(pathOf(row.path))}"`);
      }
    }
  });
});

describe("mutations are refused to everyone but the role that may make them", () => {
  const post = (path: string, who: Who, body: Record<string, string>, origin = stack.appUrl) =>
    fetch(`${stack.appUrl}${path}`, {
      method: "POST",
      redirect: "manual",
      headers: {
        Cookie: cookies.get(who) ?? "",
        Origin: origin,
        "Content-Type": "application/x-www-form-urlencoded",
      },
      body: new URLSearchParams(body),
    });

  it("only an administrator may create a study", async () => {
    const body = { code: "TEST-001", title: "A test study", sponsor: "Test sponsor" };
    for (const who of ["data_manager", "biostatistician", "medical_writer", "sponsor_reader"] as const) {
      expect((await post("/admin/studies", who, body)).status).toBe(403);
    }
    expect(outcomeOf(await post("/admin/studies", "anonymous", body), false)).toBe("in");
    expect((await post("/admin/studies", "admin", body)).status).toBe(200);
  });

  it("only an administrator may change study roles", async () => {
    const body = { personId: "x", studyId, role: "biostatistician" };
    for (const who of ["data_manager", "biostatistician", "medical_writer", "sponsor_reader"] as const) {
      expect((await post("/admin/people", who, body)).status).toBe(403);
    }
  });

  it("a form posted from another site is refused (CSRF) and changes nothing", async () => {
    // The framework refuses cross-origin actions itself (400); our middleware refuses any
    // other state-changing request from another site (403). Either way nothing is stored.
    const res = await post(
      "/admin/studies",
      "admin",
      { code: "EVIL-1", title: "Cross-site", sponsor: "y" },
      "http://evil.example",
    );
    expect([400, 403]).toContain(res.status);
    const rs = await testDb(stack).execute("SELECT count(*) AS n FROM studies WHERE code = 'EVIL-1'");
    expect(rs.rows[0].n).toBe(0);
    const viaData = await fetch(`${stack.appUrl}/admin/studies.data`, {
      method: "POST",
      headers: {
        Cookie: cookies.get("admin") ?? "",
        Origin: "http://evil.example",
        "Content-Type": "application/x-www-form-urlencoded",
      },
      body: new URLSearchParams({ code: "EVIL-2", title: "Cross-site", sponsor: "y" }),
    });
    expect([400, 403]).toContain(viaData.status);
    expect(
      (await testDb(stack).execute("SELECT count(*) AS n FROM studies WHERE code LIKE 'EVIL-%'")).rows[0].n,
    ).toBe(0);
  });

  it("a body over the limit is refused with 413", async () => {
    const res = await post("/admin/studies", "admin", {
      code: "BIG",
      title: "x".repeat(1_100_000),
      sponsor: "y",
    });
    expect(res.status).toBe(413);
  });
});

describe("security headers", () => {
  it("documents carry a nonce-based CSP without inline scripts, and the other baseline headers", async () => {
    const res = await get("/sign-in", "anonymous");
    const csp = res.headers.get("Content-Security-Policy") ?? "";
    expect(csp).toMatch(/script-src 'self' 'nonce-[A-Za-z0-9+/=]+'/);
    expect(csp).not.toMatch(/script-src[^;]*unsafe-inline/);
    expect(csp).toContain("frame-ancestors 'none'");
    expect(res.headers.get("X-Content-Type-Options")).toBe("nosniff");
    expect(res.headers.get("Referrer-Policy")).toBe("same-origin");
    const html = await res.text();
    const nonce = /'nonce-([^']+)'/.exec(csp)?.[1];
    for (const tag of html.match(/<script\b[^>]*>/g) ?? []) expect(tag).toContain(`nonce="${nonce}"`);
  });

  it("error pages show no stack trace or SQL", async () => {
    const res = await get("/studies/'%20OR%201=1--", "data_manager");
    expect(res.status).toBe(404);
    const html = await res.text();
    expect(html).not.toMatch(/at .+\.(js|ts):\d+|SQLITE|SELECT /);
  });
});
