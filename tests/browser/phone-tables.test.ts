/**
 * On a phone (390 × 844 CSS pixels, headless Chromium) no table makes a page wider than the
 * screen: wide tables scroll sideways inside their card, in a region that is named and takes
 * keyboard focus (WAI-ARIA: a scrollable region needs an accessible name and focus). Checked on
 * the results page, the appendix preview, the sponsor report and the audit trail, with
 * screenshots. The study (PHN-301) is this file's own, made through the services on the stack's
 * database; its primary rerun's planned sensitivity analyses run by themselves, and the page
 * shows them completed without a click. The plan editor offers only the checks and sensitivity
 * analyses that apply to the family chosen.
 */
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot } from "../support/browser";
import { demoPrimaryForm } from "../support/demo-forms";
import { personId, sessionCookieFor } from "../support/sessions";

const stack = inject("stack");
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");

const EMAIL = {
  admin: "morgan.reyes@plumbline.example",
  priya: "priya.lindqvist@plumbline.example",
  tomas: "tomas.berg@plumbline.example",
  helen: "helen.achter@plumbline.example",
  sam: "sam.quill@quillmoor.example",
} as const;

let browser: Browser;
let studyId = "";
let rerunId = "";
let draftVersionId = "";

beforeAll(async () => {
  browser = await launchBrowser();
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
  const person = async (email: string) => {
    const [p] = await db
      .select()
      .from(t.people)
      .where(eq(t.people.id, await personId(stack, email)));
    return { id: p.id, name: p.displayName, organisation: p.organisation };
  };
  const who = {
    admin: await person(EMAIL.admin),
    priya: await person(EMAIL.priya),
    tomas: await person(EMAIL.tomas),
    helen: await person(EMAIL.helen),
    sam: await person(EMAIL.sam),
  };
  const created = await createStudy(who.admin, {
    code: "PHN-301",
    title: "Tables on a phone",
    sponsor: "Quillmoor Therapeutics",
    compound: null,
    indication: null,
    phase: "3",
  });
  if (!created.ok) throw new Error(JSON.stringify(created.fieldErrors));
  studyId = created.study.id;
  for (const [p, role] of [
    [who.priya, "biostatistician"],
    [who.tomas, "biostatistician"],
    [who.helen, "medical_writer"],
    [who.sam, "sponsor_reader"],
  ] as const)
    await setStudyRole(who.admin, studyId, p.id, role);
  await db
    .insert(t.studyShares)
    .values({ id: crypto.randomUUID(), studyId, organisation: who.sam.organisation ?? "" });
  const datasetVersionId = (await seedDemoDataset(studyId)).versionId;
  const locked = await listLockedVersions(studyId);
  const { versionId } = await plans.createPlan(who.priya, studyId, {
    title: "Efficacy models",
    sapName: "Statistical analysis plan",
    sapVersion: "2.0",
    sapDate: "2026-10-01",
  });
  const v = validatePlannedModel(
    readPlannedModelForm(demoPrimaryForm()),
    locked.map((x) => ({ name: x.datasetName, columns: x.columns })),
    [],
  );
  if (!v.ok) throw new Error(JSON.stringify(v.errors));
  const plannedModelId = await plans.savePlannedModel(who.priya, studyId, versionId, 1, null, v.model);
  await plans.submitForApproval(who.priya, studyId, versionId, 2);
  await plans.approvePlanVersion({ ...who.tomas, signedInAt: new Date().toISOString() }, studyId, versionId);
  // the server's worker runs the primary, then the planned sensitivity analyses it queues
  rerunId = await reruns.startRerun(who.priya, studyId, {
    plannedModelId,
    datasetVersionId,
    options: { variant: "planned" },
  });
  for (let i = 0; i < 900; i++) {
    const children = await reruns.sensitivityReruns(rerunId);
    const primary = await reruns.getRerun(studyId, rerunId);
    if (primary.rerun.status === "failed")
      throw new Error(primary.rerun.failureReason ?? "the primary failed");
    if (
      primary.rerun.status === "completed" &&
      children.length === 3 &&
      children.every((c) => c.status === "completed")
    )
      break;
    await new Promise((ok) => setTimeout(ok, 200));
  }
  for (const f of await findings.findingsOf(rerunId)) {
    await findings.assessFinding(who.priya, studyId, f.id, {
      category: "model_assumption",
      impact: "none",
      action: "planned_sensitivity",
      rationale:
        "The planned sensitivity analyses leave the treatment conclusion unchanged; judged on the figures.",
    });
  }
  await findings.signRerun({ ...who.tomas, signedInAt: new Date().toISOString() }, studyId, rerunId);
  // a draft plan version for the editor's check
  draftVersionId = (
    await plans.createPlan(who.priya, studyId, {
      title: "Secondary models",
      sapName: "Statistical analysis plan",
      sapVersion: "2.0",
      sapDate: "2026-10-01",
    })
  ).versionId;
}, 240_000);

afterAll(async () => {
  await browser?.close();
});

async function phone(email: string): Promise<Page> {
  const context = await browser.newContext({ viewport: { width: 390, height: 844 }, deviceScaleFactor: 2 });
  const [name, value] = (await sessionCookieFor(stack, email)).split("=");
  await context.addCookies([{ name, value, url: stack.appUrl }]);
  return context.newPage();
}

/** No horizontal page overflow; every table sits in a named, focusable region no wider than the screen; returns how many regions scroll. */
async function tablesFit(page: Page): Promise<number> {
  const report = await page.evaluate(() => {
    const tables = [...document.querySelectorAll("main table, article table, table")];
    return {
      pageWidth: document.documentElement.scrollWidth,
      wide: [...document.querySelectorAll("body *")]
        .filter(
          (e) =>
            (e.getBoundingClientRect().right > window.innerWidth + 1 ||
              (e.getAttribute("role") !== "region" && e.scrollWidth > window.innerWidth + 1)) &&
            !e.parentElement?.closest('[role="region"]'),
        )
        .slice(-6)
        .map(
          (e) =>
            `${e.tagName.toLowerCase()}.${String(e.className).slice(0, 40)} ${e.scrollWidth}/${Math.round(e.getBoundingClientRect().right)} "${(e.textContent ?? "").slice(0, 30)}"`,
        ),
      screen: window.innerWidth,
      tables: tables.map((t) => {
        const region = t.closest('[role="region"]') as HTMLElement | null;
        const r = region?.getBoundingClientRect();
        return {
          region: Boolean(region),
          caption: (t.querySelector("caption, th")?.textContent ?? "").slice(0, 60),
          name: region?.getAttribute("aria-label") ?? "",
          focusable: region?.tabIndex === 0,
          right: r ? r.right : Number.POSITIVE_INFINITY,
          scrolls: region ? region.scrollWidth > region.clientWidth : false,
        };
      }),
    };
  });
  expect(
    report.pageWidth,
    `the page is no wider than the screen; wider: ${report.wide.join(", ")}`,
  ).toBeLessThanOrEqual(report.screen);
  expect(report.tables.length).toBeGreaterThan(0);
  for (const t of report.tables) {
    expect(t.region, `each table scrolls within a region (${t.caption})`).toBe(true);
    expect(t.name.length).toBeGreaterThan(0);
    expect(t.focusable).toBe(true);
    expect(t.right).toBeLessThanOrEqual(report.screen);
  }
  return report.tables.filter((t) => t.scrolls).length;
}

describe("tables on a phone, 390 px wide", () => {
  it("results page: the planned sensitivity analyses ran by themselves; wide tables scroll inside their cards", async () => {
    const page = await phone(EMAIL.priya);
    await page.goto(`${stack.appUrl}/studies/${studyId}/reruns/${rerunId}`);
    await page.getByRole("heading", { name: "Sensitivity analyses" }).waitFor();
    const planned = page
      .getByRole("heading", { name: "Sensitivity analyses" })
      .locator("xpath=..")
      .getByRole("listitem");
    expect(await planned.count()).toBe(3);
    expect(await planned.getByText("Completed", { exact: true }).count()).toBe(3);
    expect(await page.getByRole("button", { name: "Run it" }).count()).toBe(0);
    expect(await tablesFit(page)).toBeGreaterThan(0);
    // keyboard users reach a scrolling table and scroll it with the arrow keys
    const contrasts = page.getByRole("region", { name: "Treatment contrasts" }).first();
    await contrasts.focus();
    await page.keyboard.press("ArrowRight");
    await page.keyboard.press("ArrowRight");
    await expect.poll(() => contrasts.evaluate((el) => el.scrollLeft)).toBeGreaterThan(0);
    await contrasts.evaluate((el) => (el.scrollLeft = 0));
    await page.getByRole("heading", { name: "Treatment effect", exact: true }).scrollIntoViewIfNeeded();
    await screenshot(page, "phone-results");
    await page.screenshot({ path: "test-results/screenshots/phone-results-view.png" });
    await page.getByRole("heading", { name: "Sensitivity analyses", exact: true }).scrollIntoViewIfNeeded();
    await page.screenshot({ path: "test-results/screenshots/phone-results-sensitivity-view.png" });
    await page.context().close();
  }, 120_000);

  it("appendix preview", async () => {
    const page = await phone(EMAIL.helen);
    await page.goto(`${stack.appUrl}/studies/${studyId}/appendix?rerun=${encodeURIComponent(rerunId)}`);
    await page.getByRole("article", { name: "Preview of the appendix" }).waitFor({ timeout: 60_000 });
    expect(await tablesFit(page)).toBeGreaterThan(0);
    await page
      .getByText(/Deviation log with assessments/)
      .first()
      .scrollIntoViewIfNeeded();
    await screenshot(page, "phone-appendix-preview");
    await page.screenshot({ path: "test-results/screenshots/phone-appendix-preview-view.png" });
    await page.context().close();
  }, 120_000);

  it("sponsor report", async () => {
    const page = await phone(EMAIL.sam);
    await page.goto(`${stack.appUrl}/studies/${studyId}/reports/${rerunId}`);
    await page.getByRole("heading", { name: "Checks of the plan" }).waitFor();
    expect(await tablesFit(page)).toBeGreaterThan(0);
    await screenshot(page, "phone-sponsor-report");
    await page.getByRole("heading", { name: "Checks of the plan" }).scrollIntoViewIfNeeded();
    await page.screenshot({ path: "test-results/screenshots/phone-sponsor-report-view.png" });
    await page.context().close();
  }, 60_000);

  it("audit trail, with its pages", async () => {
    const page = await phone(EMAIL.admin);
    // more than one page of 50 events: each export is an audited event of its own
    const cookie = await sessionCookieFor(stack, EMAIL.admin);
    for (let i = 0; i < 60; i++)
      await (
        await fetch(`${stack.appUrl}/admin/audit/export.csv?action=none.`, { headers: { Cookie: cookie } })
      ).text();
    await page.goto(`${stack.appUrl}/admin/audit?size=50`);
    await page.getByRole("navigation", { name: "Audit trail pages", exact: true }).waitFor();
    expect(await tablesFit(page)).toBe(1);
    await page
      .getByRole("navigation", { name: "Audit trail pages", exact: true })
      .getByRole("link", { name: "Next" })
      .click();
    await page
      .getByText(/page 2 of \d+/)
      .first()
      .waitFor();
    await screenshot(page, "phone-audit-trail");
    await page.getByRole("navigation", { name: "Audit trail pages", exact: true }).scrollIntoViewIfNeeded();
    await page.screenshot({ path: "test-results/screenshots/phone-audit-trail-pager-view.png" });
    await page.getByRole("region", { name: "Audit events" }).scrollIntoViewIfNeeded();
    await page.screenshot({ path: "test-results/screenshots/phone-audit-trail-view.png" });
    await page.context().close();
  }, 60_000);
});

describe("the plan editor offers what applies to the family", () => {
  it("no overdispersion check for a binary endpoint, robust errors for a GLM, the variance function only for a linear model", async () => {
    const context = await browser.newContext({ viewport: { width: 1360, height: 900 } });
    const [name, value] = (await sessionCookieFor(stack, EMAIL.priya)).split("=");
    await context.addCookies([{ name, value, url: stack.appUrl }]);
    const page = await context.newPage();
    await page.goto(`${stack.appUrl}/studies/${studyId}/plans/${draftVersionId}/models/new`);
    await page.getByLabel("Family").waitFor();
    const offered = async (field: string) => page.locator(`input[name="${field}"]`).count();
    expect(await offered("sensitivity:variance_function")).toBe(1);
    expect(await offered("check:overdispersion:enabled")).toBe(0);
    await page.getByLabel("Family").selectOption("binomial");
    await expect.poll(() => offered("sensitivity:variance_function")).toBe(0);
    expect(await offered("check:overdispersion:enabled")).toBe(0);
    expect(await offered("check:events_per_variable:enabled")).toBe(1);
    expect(await offered("check:shapiro_wilk:enabled")).toBe(0);
    expect(await offered("sensitivity:robust_hc3")).toBe(1);
    expect(await offered("sensitivity:quasi_poisson")).toBe(0);
    await page
      .getByRole("group", { name: "Planned sensitivity analyses" })
      .screenshot({ path: "test-results/screenshots/editor-binomial-sensitivity.png" });
    await page.getByLabel("Family").selectOption("poisson");
    await expect.poll(() => offered("check:overdispersion:enabled")).toBe(1);
    expect(await page.locator('input[name="check:overdispersion:enabled"]').isChecked()).toBe(true);
    expect(await offered("sensitivity:quasi_poisson")).toBe(1);
    await context.close();
  }, 60_000);
});
