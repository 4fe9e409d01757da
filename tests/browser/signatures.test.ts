/**
 * Electronic signatures in a real browser, through the real SAML round trip against the fake
 * identity provider: plan approval and dataset lock are signatures (meaning stated, name and
 * time shown), a sign-in older than 5 minutes sends the signer to the identity provider with
 * ForceAuthn, picking another person there is refused (the session stays the signer's, nothing
 * is signed), and confirming the same person brings the signer back to finish in one press.
 * 21 CFR Part 11 (11.50 signature manifestations, 11.200 signature components) is the source
 * of the rules checked.
 */
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot, signInAs } from "../support/browser";
import { personId, sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");
// The study of this file is made through the services on the stack's database, so the plans,
// reruns and signatures made here never change what other browser tests find in QMT-301.
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");
const PRIYA = "priya.lindqvist@plumbline.example";
const TOMAS = "tomas.berg@plumbline.example";
const DANA = "dana.okafor@plumbline.example";
let browser: Browser;
let studyId = "";
let demoStudyId = "";

/** A study of its own (SIG-301) with the demo dataset locked and the people this file signs in as. */
async function signatureStudy(): Promise<string> {
  const { createStudy } = await import("~/.server/studies.server");
  const { setStudyRole } = await import("~/.server/people.server");
  const { seedDemoDataset } = await import("~/.server/datasets/demo-seed.server");
  const person = async (email: string) => {
    const id = await personId(stack, email);
    return { id, name: await one("SELECT display_name FROM people WHERE id = ?", [id]), organisation: null };
  };
  const admin = await person("morgan.reyes@plumbline.example");
  const created = await createStudy(admin, {
    code: "SIG-301",
    title: "Signatures in the browser",
    sponsor: "Quillmoor Therapeutics",
    compound: null,
    indication: null,
    phase: "3",
  });
  if (!created.ok) throw new Error(JSON.stringify(created.fieldErrors));
  const id = created.study.id;
  for (const [email, role] of [
    [PRIYA, "biostatistician"],
    [TOMAS, "biostatistician"],
    [DANA, "data_manager"],
  ] as const)
    await setStudyRole(admin, id, (await person(email)).id, role);
  await seedDemoDataset(id);
  return id;
}

beforeAll(async () => {
  browser = await launchBrowser();
  demoStudyId = await studyIdByCode(stack, "QMT-301");
  studyId = await signatureStudy();
}, 120_000);
afterAll(async () => {
  await browser?.close();
});

async function one(sql: string, args: (string | number)[]): Promise<string> {
  const rs = await testDb(stack).execute({ sql, args });
  return String(rs.rows[0]?.[0] ?? "");
}

async function post(cookie: string, path: string, fields: [string, string][]): Promise<string> {
  const res = await fetch(`${stack.appUrl}${path}`, {
    method: "POST",
    redirect: "manual",
    headers: { Cookie: cookie, Origin: stack.appUrl, "Content-Type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams(fields),
  });
  if (res.status >= 400)
    throw new Error(`POST ${path} answered ${res.status}: ${(await res.text()).slice(0, 300)}`);
  await res.body?.cancel();
  return res.headers.get("Location") ?? "";
}

/** Makes every session of the person look signed in 10 minutes ago (as after a coffee break). */
async function ageSignIn(email: string): Promise<void> {
  const pid = await personId(stack, email);
  await testDb(stack).execute({
    sql: "UPDATE sessions SET data_json = json_set(data_json, '$.signedInAt', ?) WHERE person_id = ?",
    args: [new Date(Date.now() - 10 * 60 * 1000).toISOString(), pid],
  });
}

async function signedIn(name: string): Promise<Page> {
  const context = await browser.newContext({ viewport: { width: 1360, height: 900 } });
  const page = await context.newPage();
  await signInAs(page, stack.appUrl, name);
  return page;
}

/** At the identity provider's picker (ForceAuthn), pick someone; wait until back at the app. */
async function pickAtIdp(page: Page, displayName: string): Promise<void> {
  await page.getByRole("button", { name: `Sign in as ${displayName}` }).click();
  await page.waitForURL(
    (url) => url.origin === new URL(stack.appUrl).origin && url.searchParams.has("reauth"),
    { timeout: 20_000 },
  );
}

describe("plan approval is an electronic signature", () => {
  let planPath = "";

  beforeAll(async () => {
    const priya = await sessionCookieFor(stack, PRIYA);
    const base = `/studies/${studyId}`;
    const planUrl = await post(priya, `${base}/plans`, [
      ["title", "Signature test plan"],
      ["sapName", "SAP for the signature test"],
      ["sapVersion", "1.0"],
      ["sapDate", "2026-11-02"],
    ]);
    const versionId = planUrl.split("/").pop() ?? "";
    await post(priya, `${base}/plans/${versionId}/models/new`, [
      ["revision", "1"],
      ["key", "primary"],
      ["title", "Primary efficacy"],
      ["datasetName", "adeff"],
      ["populationColumn", "fasfl"],
      ["populationValue", "Y"],
      ["response", "chg"],
      ["family", "gaussian"],
      ["treatment", "arm"],
      ["treatmentReference", "Placebo"],
      ["id", "subjid"],
      ["covariate", "base"],
    ]);
    const revision = await one("SELECT revision FROM plan_versions WHERE id = ?", [versionId]);
    await post(priya, `${base}/plans/${versionId}`, [
      ["intent", "submit"],
      ["revision", revision],
    ]);
    expect(await one("SELECT status FROM plan_versions WHERE id = ?", [versionId])).toBe("awaiting_approval");
    planPath = `${base}/plans/${versionId}`;
  });

  it("a stale sign-in goes to the identity provider; another person there is refused and nothing is approved", async () => {
    const page = await signedIn("Tomas Berg");
    await ageSignIn(TOMAS);
    await page.goto(`${stack.appUrl}${planPath}`);
    const explainer = page.getByTestId("signing-explainer");
    await expect
      .poll(() => explainer.textContent())
      .toMatch(
        /Approving is your electronic signature.*“Approved as the analysis plan to be followed”.*sends you to the sign-in service to confirm that it is you/,
      );
    await screenshot(page, "signature-plan-stale");
    await page.getByRole("button", { name: "Approve version 1" }).click();
    // ForceAuthn: the identity provider asks again. Pick someone else (the author, even).
    await pickAtIdp(page, "Priya Lindqvist");
    expect(new URL(page.url()).searchParams.get("reauth")).toBe("different-person");
    await expect
      .poll(() =>
        page
          .getByRole("alert")
          .filter({ hasText: /confirmed a different person/ })
          .count(),
      )
      .toBe(1);
    await screenshot(page, "signature-plan-different-person");
    expect(
      await one("SELECT status FROM plan_versions WHERE id = ?", [planPath.split("/").pop() ?? ""]),
    ).toBe("awaiting_approval");
    // Still Tomas's session: his name is on the page and Priya got no session from it.
    await expect.poll(() => page.getByText("Tomas Berg").count()).toBeGreaterThan(0);
    expect(await page.getByRole("button", { name: "Approve version 1" }).count()).toBe(1);
    expect(
      await one("SELECT count(*) FROM audit_events WHERE action = 'auth.reauth_refused' AND entity_id = ?", [
        await personId(stack, TOMAS),
      ]),
    ).not.toBe("0");

    // Confirming the same person brings him back to finish with one press.
    await page.getByRole("button", { name: "Approve version 1" }).click();
    await pickAtIdp(page, "Tomas Berg");
    expect(new URL(page.url()).searchParams.get("reauth")).toBe("done");
    await expect
      .poll(() =>
        page
          .getByRole("status")
          .filter({ hasText: /Press the button once more/ })
          .count(),
      )
      .toBe(1);
    await page.getByRole("button", { name: "Approve version 1" }).click();
    await page
      .getByTestId("plan-approval")
      .filter({
        hasText:
          /Tomas Berg · \d{4}-\d{2}-\d{2} \d{2}:\d{2} UTC · “Approved as the analysis plan to be followed”/,
      })
      .waitFor();
    await screenshot(page, "signature-plan-approved");
    const after = JSON.parse(
      await one(
        "SELECT after_json FROM audit_events WHERE action = 'plan.approve' AND entity_id = ? ORDER BY seq DESC",
        [planPath.split("/").pop() ?? ""],
      ),
    ) as {
      signature: { meaning: string; signedBy: string; signedAt: string; authenticatedAt: string };
    };
    expect(after.signature).toMatchObject({
      meaning: "Approved as the analysis plan to be followed",
      signedBy: "Tomas Berg",
    });
    expect(Date.parse(after.signature.signedAt) - Date.parse(after.signature.authenticatedAt)).toBeLessThan(
      5 * 60 * 1000,
    );
    await page.context().close();
  });
});

describe("dataset lock is an electronic signature", () => {
  let versionPath = "";

  beforeAll(async () => {
    const dana = await sessionCookieFor(stack, DANA);
    const form = new FormData();
    form.append("datasetName", "adsign");
    form.append("file", new File(["arm,score\nA,1.5\nB,2.5\nA,3.5\n"], "adsign.csv", { type: "text/csv" }));
    const res = await fetch(`${stack.appUrl}/studies/${studyId}/datasets/upload`, {
      method: "POST",
      body: form,
      headers: { Cookie: dana, Origin: stack.appUrl, Accept: "application/x-ndjson" },
    });
    const lines = (await res.text())
      .trim()
      .split("\n")
      .map((l) => JSON.parse(l) as { type: string; result?: { ok: boolean; versionId: string } });
    const result = lines[lines.length - 1].result;
    expect(result?.ok).toBe(true);
    versionPath = `/studies/${studyId}/datasets/${result?.versionId}`;
  });

  it("a stale sign-in confirms the same person at the identity provider, then one press locks, with meaning, name and time shown", async () => {
    const page = await signedIn("Dana Okafor");
    await ageSignIn(DANA);
    await page.goto(`${stack.appUrl}${versionPath}`);
    await expect
      .poll(() => page.getByTestId("signing-explainer").textContent())
      .toMatch(/Locking is your electronic signature.*“Locked as the data to be analysed”/);
    await page.getByRole("button", { name: "Lock version 1" }).click();
    await pickAtIdp(page, "Dana Okafor");
    expect(new URL(page.url()).searchParams.get("reauth")).toBe("done");
    expect(
      await one("SELECT status FROM dataset_versions WHERE id = ?", [versionPath.split("/").pop() ?? ""]),
    ).toBe("draft");
    await page.getByRole("button", { name: "Lock version 1" }).click();
    await page
      .getByTestId("dataset-lock")
      .filter({ hasText: /Dana Okafor, .+ · “Locked as the data to be analysed”/ })
      .waitFor();
    await screenshot(page, "signature-dataset-locked");
    expect(
      await one("SELECT status FROM dataset_versions WHERE id = ?", [versionPath.split("/").pop() ?? ""]),
    ).toBe("locked");
    await page.context().close();
  });
});

describe("rerun sign-off", () => {
  let rerunPath = "";

  beforeAll(async () => {
    // An unsigned primary rerun with every finding assessed by Priya, made over HTTP as people make it.
    const priya = await sessionCookieFor(stack, PRIYA);
    const base = `/studies/${studyId}`;
    const planUrl = await post(priya, `${base}/plans`, [
      ["title", "Sign-off test plan"],
      ["sapName", "SAP for the sign-off test"],
      ["sapVersion", "1.0"],
      ["sapDate", "2026-11-03"],
    ]);
    const versionId = planUrl.split("/").pop() ?? "";
    await post(priya, `${base}/plans/${versionId}/models/new`, [
      ["revision", "1"],
      ["key", "primary"],
      ["title", "Primary efficacy"],
      ["datasetName", "adeff"],
      ["populationColumn", "fasfl"],
      ["populationValue", "Y"],
      ["response", "chg"],
      ["family", "gaussian"],
      ["treatment", "arm"],
      ["treatmentReference", "Placebo"],
      ["id", "subjid"],
      ["covariate", "base"],
      ["check:cooks_distance:enabled", "on"],
    ]);
    const plannedModelId = await one("SELECT id FROM planned_models WHERE plan_version_id = ?", [versionId]);
    await post(priya, `${base}/plans/${versionId}`, [
      ["intent", "submit"],
      ["revision", await one("SELECT revision FROM plan_versions WHERE id = ?", [versionId])],
    ]);
    await post(await sessionCookieFor(stack, TOMAS), `${base}/plans/${versionId}`, [["intent", "approve"]]);
    const datasetVersionId = await one(
      "SELECT v.id FROM dataset_versions v JOIN datasets d ON d.id = v.dataset_id WHERE d.study_id = ? AND d.name = 'adeff' AND v.status = 'locked' ORDER BY v.version",
      [studyId],
    );
    const rerunUrl = await post(priya, `${base}/reruns`, [
      ["plannedModelId", plannedModelId],
      ["datasetVersionId", datasetVersionId],
    ]);
    const rerunId = rerunUrl.split("/").pop() ?? "";
    const deadline = Date.now() + 90_000;
    while ((await one("SELECT status FROM reruns WHERE id = ?", [rerunId])) !== "completed") {
      if (Date.now() > deadline) throw new Error(`Rerun ${rerunId} did not complete within 90 s.`);
      await new Promise((r) => setTimeout(r, 250));
    }
    const findings = await testDb(stack).execute({
      sql: "SELECT id FROM findings WHERE rerun_id = ?",
      args: [rerunId],
    });
    for (const f of findings.rows) {
      await post(priya, `${base}/reruns/${rerunId}`, [
        ["intent", "assess"],
        ["findingId", String(f.id)],
        ["category", "model_assumption"],
        ["impact", "none"],
        ["action", "planned_sensitivity"],
        ["rationale", "Checked against the planned sensitivity analyses; the conclusion stands."],
      ]);
    }
    rerunPath = `${base}/reruns/${rerunId}`;
  }, 120_000);

  it("the author picked at the identity provider cannot sign in the approver's place; the approver finishes in one press", async () => {
    const page = await signedIn("Tomas Berg");
    await ageSignIn(TOMAS);
    await page.goto(`${stack.appUrl}${rerunPath}#sign-off`);
    await expect
      .poll(() => page.getByTestId("signing-explainer").textContent())
      .toMatch(
        /Signing is your electronic signature.*“Reviewed and approved”.*sends you to the sign-in service/,
      );
    await page.getByRole("button", { name: "Sign this rerun" }).click();
    await pickAtIdp(page, "Priya Lindqvist");
    expect(new URL(page.url()).searchParams.get("reauth")).toBe("different-person");
    await expect
      .poll(() =>
        page
          .getByRole("alert")
          .filter({ hasText: /confirmed a different person/ })
          .count(),
      )
      .toBe(1);
    expect(
      await one("SELECT count(*) FROM signatures WHERE rerun_id = ?", [rerunPath.split("/").pop() ?? ""]),
    ).toBe("0");
    await page.getByRole("button", { name: "Sign this rerun" }).click();
    await pickAtIdp(page, "Tomas Berg");
    expect(new URL(page.url()).searchParams.get("reauth")).toBe("done");
    await page.getByRole("button", { name: "Sign this rerun" }).click();
    await page.getByText(/Tomas Berg · “Reviewed and approved”/).waitFor();
    await screenshot(page, "signature-rerun-signed");
    const [signature] = (
      await testDb(stack).execute({
        sql: "SELECT signer_name, signed_at, authenticated_at FROM signatures WHERE rerun_id = ?",
        args: [rerunPath.split("/").pop() ?? ""],
      })
    ).rows;
    expect(signature.signer_name).toBe("Tomas Berg");
    expect(
      Date.parse(String(signature.signed_at)) - Date.parse(String(signature.authenticated_at)),
    ).toBeLessThan(5 * 60 * 1000);
    await page.context().close();
  }, 90_000);
});

describe("segregation of duties", () => {
  it("an administrator who gives himself a study role is refused on the page, and the refusal is audited", async () => {
    const page = await signedIn("Morgan Reyes");
    await page.goto(`${stack.appUrl}/admin/people`);
    await page.getByLabel("Role of Morgan Reyes on QMT-301", { exact: true }).selectOption("biostatistician");
    await page.getByRole("button", { name: "Save role of Morgan Reyes on QMT-301" }).click();
    await page
      .getByRole("alert")
      .filter({ hasText: /another administrator must grant it/ })
      .waitFor();
    await screenshot(page, "self-grant-refused");
    const morgan = await personId(stack, "morgan.reyes@plumbline.example");
    expect(
      await one("SELECT count(*) FROM study_memberships WHERE person_id = ? AND study_id = ?", [
        morgan,
        demoStudyId,
      ]),
    ).toBe("0");
    expect(
      Number(
        await one(
          "SELECT count(*) FROM audit_events WHERE action = 'membership.self_grant_refused' AND actor_id = ?",
          [morgan],
        ),
      ),
    ).toBeGreaterThan(0);
    await page.context().close();
  });
});
