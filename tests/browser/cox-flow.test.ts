/**
 * A time-to-event endpoint in a real browser: the data manager locks an invented
 * time-to-event dataset; a biostatistician plans a stratified Cox model (errors shown beside
 * the fields first), a second approves it; the first reruns it, sees the proportional-hazards
 * test and the figures, and assesses the findings; the second signs; the appendix carries the
 * model's tables, checks and figures.
 */
import { copyFileSync, mkdtempSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, afterEach, beforeAll, describe, expect, inject, it } from "vitest";
import { drawAllFigures, launchBrowser, screenshot, signInAs } from "../support/browser";
import { COX_DATA_FILE } from "../support/cox-dataset";
import { createStudyWithTeam } from "../support/study-team";

const stack = inject("stack");
// The study of this file (TTE-301) is made through the services on the stack's database, so its
// dataset, plan and signed rerun never change what other browser tests find in QMT-301.
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");
const STUDY = "TTE-301";

async function timeToEventStudy(): Promise<void> {
  await createStudyWithTeam(stack, { code: STUDY, title: "Time-to-event endpoints" }, [
    ["dana.okafor@plumbline.example", "data_manager"],
    ["priya.lindqvist@plumbline.example", "biostatistician"],
    ["tomas.berg@plumbline.example", "biostatistician"],
    ["helen.achter@plumbline.example", "medical_writer"],
  ]);
}
let browser: Browser;
const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-cox-"));

beforeAll(async () => {
  copyFileSync(COX_DATA_FILE, path.join(dir, "adtte.csv"));
  await timeToEventStudy();
  browser = await launchBrowser();
}, 120_000);
afterAll(async () => {
  await browser?.close();
});
let current: Page | null = null;
afterEach(async (ctx) => {
  if (ctx.task.result?.state === "fail" && current && !current.isClosed())
    await screenshot(current, `cox-failed-${ctx.task.name.slice(0, 30).replace(/\W+/g, "-")}`);
});

async function as(name: string): Promise<Page> {
  const context = await browser.newContext({ viewport: { width: 1360, height: 900 } });
  const page = await context.newPage();
  current = page;
  page.setDefaultTimeout(15_000);
  await signInAs(page, stack.appUrl, name);
  await page.getByRole("link", { name: STUDY }).click();
  await page.getByRole("navigation", { name: "Study sections" }).waitFor();
  return page;
}

describe("a stratified Cox model from plan to appendix", () => {
  let planUrl = "";
  let rerunUrl = "";

  it("the data manager uploads and locks the time-to-event dataset", async () => {
    const page = await as("Dana Okafor");
    await page
      .getByRole("navigation", { name: "Study sections" })
      .getByRole("link", { name: "Datasets" })
      .click();
    await page.getByLabel("File").setInputFiles(path.join(dir, "adtte.csv"));
    await page.getByRole("button", { name: "Upload and check" }).click();
    await page.getByRole("heading", { name: "adtte · version 1" }).waitFor({ timeout: 30_000 });
    // the invented subject and site codes are screened as possible identifiers: record why they are not
    const reasons = page.getByLabel("Why it is not an identifier");
    for (let guard = 0; guard < 10 && (await reasons.count()) > 0; guard++) {
      const before = await reasons.count();
      await screenshot(page, "cox-dataset-screen");
      await reasons.first().fill("Invented test data: generated subject codes and ages, no real people");
      await page.getByRole("button", { name: "Record: not an identifier" }).first().click();
      await expect.poll(() => reasons.count()).toBeLessThan(before);
    }
    await page.getByRole("button", { name: "Lock version 1" }).click();
    await page.getByRole("button", { name: "Lock version 1" }).waitFor({ state: "detached" });
    await page
      .getByRole("definition")
      .filter({ hasText: /^Locked$/ })
      .waitFor();
    await page.context().close();
  });

  it("a biostatistician plans the Cox model, with errors beside the fields first", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Analysis plans" }).click();
    await page.getByLabel("Title").fill("Time-to-event models");
    await page.getByLabel("SAP document").fill("Statistical analysis plan TTE-301");
    await page.getByLabel("SAP version").fill("2.1");
    await page.getByLabel("SAP date").fill("2026-10-15");
    await page.getByRole("button", { name: "Start the plan" }).click();
    await page.getByRole("link", { name: "Add a planned model" }).click();
    await page.getByLabel("Key").fill("tte");
    await page.getByLabel("Title").fill("Time to first event");
    await page.getByLabel("Locked dataset").selectOption("adtte");
    await page.getByLabel("Family").selectOption("cox");
    await page.getByLabel("Follow-up time (event or censoring)").selectOption("AVAL");
    await page.getByLabel("Treatment variable").selectOption("TRTP");
    await page.getByLabel("Reference arm").selectOption("Placebo");
    await page.getByLabel("Subject identifier").selectOption("USUBJID");
    for (const c of ["AGE", "BASE", "STRAT2"]) await page.locator(`#cov-${c}`).check();
    // no status column yet: the error stands beside the field
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page
      .getByText(/needs? attention/)
      .first()
      .waitFor();
    await page.getByText("Choose the column that says whether the event happened (e.g. CNSR).").waitFor();
    await page.getByLabel("Status column").selectOption("CNSR");
    await page.locator('input[name="eventValue"][value="0"]').check();
    await page.locator('input[name="stratum"][value="STRAT1"]').check();
    await page.getByLabel("Tied event times").selectOption("breslow");
    // a planned sensitivity analysis of time-to-event models only: the restricted mean to τ = 180
    await page.locator('input[name="sensitivity:cox_rmst"]').check();
    await page.getByLabel("Horizon τ of the restricted mean, in the units of the follow-up time").fill("180");
    for (const key of [
      "proportional_hazards",
      "functional_form_cox",
      "dfbetas_treatment_cox",
      "events_per_coefficient",
    ])
      expect(await page.locator(`#chk-${key}`).isChecked()).toBe(true);
    // checks of linear and generalized linear models are not offered for a time-to-event model (family-applicability.ts)
    expect(await page.locator("#chk-cooks_distance").count()).toBe(0);
    await screenshot(page, "cox-plan-editor");
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page.getByRole("heading", { name: /tte\s*Time to first event/ }).waitFor();
    await page.getByText("CNSR; event when 0").waitFor();
    await page.getByRole("button", { name: "Submit for approval" }).click();
    await page.getByText("Awaiting approval").first().waitFor();
    planUrl = page.url();
    await page.context().close();
  });

  it("a second biostatistician approves it", async () => {
    const page = await as("Tomas Berg");
    await page.goto(planUrl);
    await page.getByRole("button", { name: /Approve version/ }).click();
    // the approval row reads "not yet" until the approval is recorded
    await expect.poll(() => page.getByTestId("plan-approval").innerText()).not.toBe("not yet");
    await page.context().close();
  });

  it("the first reruns it, sees the proportional-hazards test and the figures, and assesses the findings", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Reruns" }).click();
    const value = await page.locator("#rr-model option", { hasText: "tte ·" }).getAttribute("value");
    await page.getByLabel("Approved planned model").selectOption(value ?? "");
    await page.getByRole("button", { name: "Rerun" }).click();
    await page.getByRole("heading", { name: "Checks of the plan" }).waitFor({ timeout: 30_000 });
    rerunUrl = page.url().split("#")[0];
    await page.getByRole("heading", { name: "Hazard ratios", exact: true }).waitFor();
    const ph = page
      .getByRole("table")
      .filter({ hasText: "Test of proportional hazards per term and global" });
    expect(await ph.getByRole("rowheader", { name: "Global" }).count()).toBe(1);
    expect(await ph.getByRole("rowheader", { name: "TRTP" }).count()).toBe(1);
    await page.getByRole("heading", { name: "Proportional hazards (Grambsch–Therneau)" }).waitFor();
    await screenshot(page, "cox-rerun-results");
    const top = await page.getByRole("region", { name: "Hazard ratios", exact: true }).boundingBox();
    const phCard = await page
      .locator("article", {
        has: page.getByRole("heading", { name: "Proportional hazards (Grambsch–Therneau)" }),
      })
      .boundingBox();
    if (top && phCard)
      await page.screenshot({
        path: "test-results/screenshots/cox-tables.png",
        clip: { x: top.x, y: top.y, width: top.width, height: phCard.y + phCard.height - top.y },
      });
    const states = await drawAllFigures(page);
    expect(states.length).toBeGreaterThanOrEqual(9);
    expect(states.every((s) => s === "ready")).toBe(true);
    const km = page.locator('[data-figure="kaplan_meier"] [role="img"]').first();
    expect(await km.getAttribute("aria-label")).toMatch(/Kaplan–Meier/);
    const figures = page.getByRole("region", { name: "Survival by arm and the model's residuals" });
    await figures.scrollIntoViewIfNeeded();
    await page.screenshot({
      path: "test-results/screenshots/cox-figures.png",
      clip: (await figures.boundingBox()) ?? undefined,
    });
    await screenshot(page, "cox-rerun-results-figures");
    const open = () => page.getByRole("button", { name: "Record the assessment" }).count();
    for (let guard = 0; guard < 10 && (await open()) > 0; guard++) {
      const before = await open();
      const form = page
        .locator("form", { has: page.getByRole("button", { name: "Record the assessment" }) })
        .first();
      await form.getByLabel("Category").selectOption("model_assumption");
      await form.getByLabel("Impact on the treatment conclusion").selectOption("none");
      await form.getByLabel("Action taken").selectOption("none");
      await form
        .getByLabel("Rationale")
        .fill("Judged on the scaled Schoenfeld and DFBETAS figures; the treatment conclusion is unchanged.");
      await form.getByRole("button", { name: "Record the assessment" }).click();
      await expect.poll(open, { timeout: 30_000 }).toBeLessThan(before); // the server may be running the planned sensitivity analyses meanwhile
    }
    expect(await open()).toBe(0);
    // the planned restricted-mean analysis runs by itself, as a rerun of its own, and shows its table, with the caution
    const rmst = page
      .getByRole("listitem")
      .filter({ hasText: "Restricted mean survival time difference between arms to τ = 180" });
    // queued by itself when the primary completed; the list follows its progress
    await rmst.getByText("Completed", { exact: true }).waitFor({ timeout: 30_000 });
    await page
      .getByRole("link", { name: "Restricted mean survival time difference between arms to τ = 180" })
      .first()
      .click();
    await page
      .getByRole("heading", { name: "Restricted mean survival time", exact: true })
      .waitFor({ timeout: 30_000 });
    expect(await page.getByRole("rowheader", { name: "Active vs Placebo" }).count()).toBe(1);
    await page
      .getByText(/do not replace/)
      .first()
      .waitFor();
    await screenshot(page, "cox-rmst-results");
    await page.context().close();
  }, 120_000);

  it("the second biostatistician signs, and the appendix carries the Cox tables, checks and figures", async () => {
    const page = await as("Tomas Berg");
    await page.goto(rerunUrl);
    await page.getByRole("button", { name: "Sign this rerun" }).click();
    await page.getByText(/Tomas Berg · “Reviewed and approved”/).waitFor();
    await page.context().close();
    const writer = await as("Helen Achter");
    const rerunId = rerunUrl.split("/").at(-1) ?? "";
    await writer.goto(`${rerunUrl.split("/reruns/")[0]}/appendix?rerun=${encodeURIComponent(rerunId)}`);
    await writer.getByRole("article", { name: "Preview of the appendix" }).waitFor({ timeout: 60_000 });
    expect(await writer.locator(`[data-table-key="cox-tests:${rerunId}"]`).count()).toBe(1);
    expect(
      await writer
        .locator(`[data-table-key="checks:${rerunId}"]`)
        .getByText("Proportional hazards (Grambsch–Therneau)")
        .count(),
    ).toBe(1);
    for (const key of [
      "kaplan_meier",
      "log_minus_log",
      "schoenfeld",
      "martingale_covariate",
      "cox_influence",
    ]) {
      expect(await writer.locator(`[data-figure-key^="${key}:"] img`).count(), key).toBeGreaterThan(0);
    }
    expect(await writer.getByText(/INV-\d{4}/).count()).toBe(0);
    const km = writer.locator('[data-figure-key^="kaplan_meier:"]').first();
    await km.scrollIntoViewIfNeeded();
    await writer.screenshot({
      path: "test-results/screenshots/cox-appendix-km.png",
      clip: (await km.boundingBox()) ?? undefined,
    });
    await screenshot(writer, "cox-appendix");
    await writer.context().close();
  }, 120_000);
});
