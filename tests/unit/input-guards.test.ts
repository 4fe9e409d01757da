/**
 * Smaller holes an outside review found, each closed where the rule lives: return paths after
 * sign-in, display names from identity providers, role grants (unknown people or studies, and
 * grants to oneself), model families and SAP dates in the plan editor, failed API token
 * attempts, and the Origin check of requests that carry both a bearer token and a session.
 * The browser's URL parsing rules come from the WHATWG URL Standard (tabs and newlines are
 * removed before parsing, so `/\t/host` is `//host`).
 */
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
process.env.APP_URL = "http://127.0.0.1:5990";

import { describe, expect, it } from "vitest";

const { safeReturnTo } = await import("~/.server/session.server");
const { DISPLAY_NAME_MAX, recordSignIn, setStudyRole, RoleChangeRefused, studyRoleOf } =
  await import("~/.server/people.server");
const { db, t } = await import("~/.server/db/index.server");
const { eq } = await import("drizzle-orm");
const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
const { PlanHeader } = await import("~/.server/plans/plans.server");
const { authenticate, ApiError } = await import("~/.server/api/respond.server");
const { FAILED_ATTEMPTS_PER_MINUTE } = await import("~/.server/api/rate-limit.server");
const { securityMiddleware } = await import("~/.server/security.server");
const { sessionCookie } = await import("~/.server/session.server");

describe("return path after sign-in", () => {
  it("keeps paths of this application, with their query and fragment", () => {
    expect(safeReturnTo("/studies/s1/reruns/r1#sign-off")).toBe("/studies/s1/reruns/r1#sign-off");
    expect(safeReturnTo("/studies?x=1")).toBe("/studies?x=1");
  });
  it("refuses anything a browser would send to another host, control characters included", () => {
    for (const bad of [
      "/\t/evil.example",
      "/\n/evil.example",
      "/\r\n/evil.example",
      "//evil.example",
      "/\\evil.example",
      "\\/evil.example",
      "https://evil.example/",
      "/%09/evil.example/../x\u0000",
      "javascript:alert(1)",
      "",
      null,
    ]) {
      expect(safeReturnTo(bad), JSON.stringify(bad)).toBe("/");
    }
  });
});

describe("display names from identity providers", () => {
  it("are cut to 200 characters, trimmed, with control characters removed", async () => {
    const long = `  Ada\u0000 \u202eLovelace\n${"x".repeat(10_000)}  `;
    const person = await recordSignIn({
      source: "saml",
      externalId: "ada@plumbline.example",
      issuer: "idp",
      email: "ada@plumbline.example",
      displayName: long,
      organisation: null,
      isAdmin: true,
    });
    expect(person.displayName.length).toBeLessThanOrEqual(DISPLAY_NAME_MAX);
    expect(person.displayName.startsWith("Ada Lovelace x")).toBe(true);
    expect(person.displayName).not.toMatch(/[\u0000-\u001f\u202e]/);
    const [stored] = await db.select().from(t.people).where(eq(t.people.id, person.id));
    expect(stored.displayName).toBe(person.displayName);
  });
});

describe("role grants", () => {
  it("refuse unknown people and studies with 404 and a message, and a grant to oneself with 403, audited", async () => {
    const admin = await recordSignIn({
      source: "saml",
      externalId: "root@plumbline.example",
      issuer: "idp",
      email: "root@plumbline.example",
      displayName: "Root Admin",
      organisation: null,
      isAdmin: true,
    });
    await db.insert(t.studies).values({ id: "st-1", code: "G-1", title: "Grants", sponsor: "Nobody" });
    const actor = { id: admin.id, name: admin.displayName };
    await expect(setStudyRole(actor, "st-1", "no-such-person", "biostatistician")).rejects.toMatchObject({
      status: 404,
      message: expect.stringMatching(/no person/),
    });
    await expect(setStudyRole(actor, "no-such-study", admin.id, "biostatistician")).rejects.toMatchObject({
      status: 404,
      message: expect.stringMatching(/no study/),
    });
    const self = setStudyRole(actor, "st-1", admin.id, "biostatistician");
    await expect(self).rejects.toBeInstanceOf(RoleChangeRefused);
    await expect(self).rejects.toMatchObject({
      status: 403,
      message: expect.stringMatching(/another administrator/),
    });
    expect(await studyRoleOf(admin.id, "st-1")).toBeNull();
    const refused = await db
      .select()
      .from(t.auditEvents)
      .where(eq(t.auditEvents.action, "membership.self_grant_refused"));
    expect(refused).toHaveLength(1);
    expect(refused[0]).toMatchObject({ actorId: admin.id, entityId: admin.id, studyId: "st-1" });
    // Another administrator may grant it.
    const other = await recordSignIn({
      source: "saml",
      externalId: "second@plumbline.example",
      issuer: "idp",
      email: "second@plumbline.example",
      displayName: "Second Admin",
      organisation: null,
      isAdmin: true,
    });
    await setStudyRole({ id: other.id, name: other.displayName }, "st-1", admin.id, "biostatistician");
    expect(await studyRoleOf(admin.id, "st-1")).toBe("biostatistician");
  });
});

describe("plan editor input", () => {
  const dataset = {
    name: "adeff",
    columns: [
      { name: "y", label: null, type: "number" as const, nonMissing: 10, missing: 0, min: 0, max: 5 },
      { name: "id", label: null, type: "text" as const, nonMissing: 10, missing: 0 },
    ],
  };
  const form = (family: string) => {
    const f = new FormData();
    for (const [k, v] of Object.entries({
      key: "primary",
      title: "Primary model",
      datasetName: "adeff",
      response: "y",
      family,
      id: "id",
    }))
      f.set(k, v);
    return readPlannedModelForm(f);
  };
  it("refuses a model family it does not fit instead of storing it as Gaussian", () => {
    const v = validatePlannedModel(form("weibull"), [dataset], []);
    expect(v.ok).toBe(false);
    if (!v.ok) expect(v.errors.family).toMatch(/"weibull" is not a model family/);
    const good = validatePlannedModel(form("poisson"), [dataset], []);
    if (!good.ok) expect(good.errors.family).toBeUndefined();
  });
  it("refuses a SAP date that is not in the calendar", () => {
    const header = { title: "Plan", sapName: "SAP", sapVersion: "1.0" };
    for (const bad of ["2026-02-31", "2026-13-01", "2025-02-29", "2026-04-31", "0000-00-00"]) {
      const r = PlanHeader.safeParse({ ...header, sapDate: bad });
      expect(r.success, bad).toBe(false);
      if (!r.success) expect(r.error.issues[0].message).toMatch(/does not exist in the calendar|YYYY-MM-DD/);
    }
    for (const good of ["2024-02-29", "2026-02-28", "2026-12-31"])
      expect(PlanHeader.safeParse({ ...header, sapDate: good }).success, good).toBe(true);
  });
});

describe("failed API token attempts", () => {
  const attempt = async (token: string) => {
    try {
      await authenticate(
        new Request("http://127.0.0.1:5990/api/v1/studies", {
          headers: { Authorization: `Bearer ${token}` },
        }),
      );
      return null;
    } catch (e) {
      if (e instanceof ApiError) return e;
      throw e;
    }
  };
  it(`are throttled per token prefix after ${FAILED_ATTEMPTS_PER_MINUTE} a minute: 429 with Retry-After, other prefixes unaffected`, async () => {
    for (let i = 0; i < FAILED_ATTEMPTS_PER_MINUTE; i++)
      expect((await attempt(`plb_guessing${i}`))?.code).toBe("unauthorized");
    const throttled = await attempt("plb_guessingZZZZ");
    expect(throttled?.status).toBe(429);
    expect(Number(throttled?.headers["Retry-After"])).toBeGreaterThanOrEqual(1);
    expect(throttled?.message).toMatch(/Too many requests with a wrong API token/);
    expect((await attempt("plb_another1234"))?.code).toBe("unauthorized");
  });
});

describe("Origin check", () => {
  const run = async (headers: Record<string, string>) => {
    let reached = false;
    const request = new Request("http://127.0.0.1:5990/studies/x/plans/y", {
      method: "POST",
      headers,
      body: "intent=approve",
    });
    const next = async () => {
      reached = true;
      return new Response("ok");
    };
    const res = (await securityMiddleware(
      { request, params: {}, context: {} as never, unstable_pattern: "" } as never,
      next as never,
    )) as Response;
    return { status: res.status, reached };
  };
  it("a bearer token alone passes, but a bearer token with the session cookie and no Origin is refused", async () => {
    const cookie = (await sessionCookie.serialize("some-session")).split(";")[0];
    expect(await run({ Authorization: "Bearer plb_x" })).toMatchObject({ reached: true });
    expect(await run({ Authorization: "Bearer plb_x", Cookie: cookie })).toMatchObject({
      status: 403,
      reached: false,
    });
    expect(
      await run({ Authorization: "Bearer plb_x", Cookie: cookie, Origin: "http://127.0.0.1:5990" }),
    ).toMatchObject({ reached: true });
  });
});
