/**
 * Planning a repeated-measures (MMRM) model in a real browser: the data manager locks the
 * invented long trial dataset (tests/fixtures/mmrm-trial.csv); a biostatistician chooses the
 * model type, sees the errors beside the repeated-measures fields, adds the usual terms with one
 * press each, orders the fallback structures, and saves; the plan page names the repeated part
 * in words, and the editor opens again with every choice as saved.
 */
import { copyFileSync, mkdtempSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, afterEach, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot, signInAs } from "../support/browser";
import { createStudyWithTeam } from "../support/study-team";

const stack = inject("stack");
// The study of this file (MMP-301) is made through the services on the stack's database, so its
// dataset and plan never change what other browser tests find in QMT-301.
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");
const STUDY = "MMP-301";

async function repeatedMeasuresStudy(): Promise<void> {
  await createStudyWithTeam(stack, { code: STUDY, title: "Repeated-measures endpoints" }, [
    ["dana.okafor@plumbline.example", "data_manager"],
    ["priya.lindqvist@plumbline.example", "biostatistician"],
  ]);
}

let browser: Browser;
const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-mmrm-plan-"));

beforeAll(async () => {
  copyFileSync(path.resolve("tests", "fixtures", "mmrm-trial.csv"), path.join(dir, "adlong.csv"));
  await repeatedMeasuresStudy();
  browser = await launchBrowser();
}, 120_000);
afterAll(async () => {
  await browser?.close();
});
let current: Page | null = null;
afterEach(async (ctx) => {
  if (ctx.task.result?.state === "fail" && current && !current.isClosed())
    await screenshot(current, `mmrm-plan-failed-${ctx.task.name.slice(0, 30).replace(/\W+/g, "-")}`);
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

describe("a repeated-measures model in the plan editor", () => {
  it("the data manager uploads and locks the long dataset", async () => {
    const page = await as("Dana Okafor");
    await page
      .getByRole("navigation", { name: "Study sections" })
      .getByRole("link", { name: "Datasets" })
      .click();
    await page.getByLabel("File").setInputFiles(path.join(dir, "adlong.csv"));
    await page.getByRole("button", { name: "Upload and check" }).click();
    await page.getByRole("heading", { name: "adlong · version 1" }).waitFor({ timeout: 30_000 });
    const reasons = page.getByLabel("Why it is not an identifier");
    for (let guard = 0; guard < 10 && (await reasons.count()) > 0; guard++) {
      const before = await reasons.count();
      await reasons.first().fill("Invented test data: generated subject codes, no real people");
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

  it("a biostatistician plans the MMRM, with errors beside the repeated-measures fields first", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Analysis plans" }).click();
    await page.getByLabel("Title").fill("Repeated-measures models");
    await page.getByLabel("SAP document").fill("Statistical analysis plan MMP-301");
    await page.getByLabel("SAP version").fill("1.0");
    await page.getByLabel("SAP date").fill("2026-11-02");
    await page.getByRole("button", { name: "Start the plan" }).click();
    await page.getByRole("link", { name: "Add a planned model" }).click();
    await page.getByLabel("Key").fill("mmrm");
    await page.getByLabel("Title").fill("Change from baseline over visits");
    await page.getByLabel("Locked dataset").selectOption("adlong");
    await page.getByLabel("Family").selectOption("repeated");
    await page.getByLabel("Endpoint (change from baseline at each visit)").selectOption("CHG");
    await page.getByLabel("Treatment variable").selectOption("ARM");
    await page.getByLabel("Reference arm").selectOption("Placebo");
    // no subject and no visit yet: the errors stand beside the fields
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page
      .getByText(/needs? attention/)
      .first()
      .waitFor();
    await page
      .getByText(
        "Choose the subject identifier column (e.g. USUBJID): the records of one subject are correlated.",
      )
      .waitFor();
    await page.getByText("Choose the visit column (e.g. AVISIT).").waitFor();

    await page.getByLabel("Subject identifier").selectOption("USUBJID");
    await page.getByLabel("Visit", { exact: true }).selectOption("AVISIT");
    await page.getByLabel("Visit order (optional)").selectOption("AVISITN");
    await page.getByLabel("First fallback structure").selectOption("toeplitz");
    await page.getByLabel("Second fallback structure").selectOption("compound-symmetry");
    await page.getByLabel("Degrees of freedom").selectOption("kenward-roger");
    await page.getByLabel("Primary visit", { exact: true }).selectOption("Week 16");
    // the usual terms, one press each; baseline × visit is offered once the baseline is a covariate
    await page.locator("#cov-BASE").check();
    await page.getByRole("button", { name: "Add AVISIT (categorical)" }).click();
    await page.getByRole("button", { name: "Add ARM × AVISIT" }).click();
    await page.getByRole("button", { name: "Add BASE × AVISIT" }).click();
    expect(await page.locator("#cov-AVISIT").isChecked()).toBe(true);
    expect(await page.locator('input[name="interaction"][value="ARM|AVISIT"]').isChecked()).toBe(true);
    expect(await page.locator('input[name="interaction"][value="BASE|AVISIT"]').isChecked()).toBe(true);
    await page.getByRole("button", { name: "✓ ARM × AVISIT in the model" }).waitFor();
    // the MMRM checks only (family-applicability.ts)
    for (const key of [
      "repeated_convergence",
      "repeated_normality",
      "repeated_spread",
      "repeated_influence",
      "repeated_primary_visit",
    ])
      expect(await page.locator(`#chk-${key}`).isChecked()).toBe(true);
    expect(await page.locator("#chk-cooks_distance").count()).toBe(0);
    await page.locator('input[name="sensitivity:repeated_structure"]').check();
    await page.getByLabel("Covariance structure of the sensitivity analysis").selectOption("ar1");
    await screenshot(page, "mmrm-plan-editor");
    // Kenward–Roger is not computed for AR(1): refused beside the sensitivity analysis
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page.getByText(/^Kenward–Roger degrees of freedom are computed for the unstructured/).waitFor();
    await page
      .getByLabel("Covariance structure of the sensitivity analysis")
      .selectOption("compound-symmetry");
    await page.getByRole("button", { name: "Save planned model" }).click();

    await page.getByRole("heading", { name: /mmrm\s*Change from baseline over visits/ }).waitFor();
    await page.getByText("AVISIT, ordered by AVISITN").waitFor();
    // both interactions kept through the refused save, whatever order their terms were ticked in
    await page.getByText("ARM × AVISIT; BASE × AVISIT").waitFor();
    await page.getByText("Unstructured; if it does not converge, Toeplitz, then compound symmetry").waitFor();
    await page.getByText("Kenward–Roger", { exact: true }).waitFor();
    await page.getByText("Another covariance structure of the visits: compound symmetry").waitFor();
    await screenshot(page, "mmrm-plan-summary");

    // the editor opens again with every choice as saved
    await page.getByRole("link", { name: "Edit" }).first().click();
    await page.getByLabel("Family").waitFor();
    expect(await page.getByLabel("Family").inputValue()).toBe("repeated");
    expect(await page.getByLabel("Subject identifier").inputValue()).toBe("USUBJID");
    expect(await page.getByLabel("Visit", { exact: true }).inputValue()).toBe("AVISIT");
    expect(await page.getByLabel("Visit order (optional)").inputValue()).toBe("AVISITN");
    expect(await page.getByLabel("First fallback structure").inputValue()).toBe("toeplitz");
    expect(await page.getByLabel("Second fallback structure").inputValue()).toBe("compound-symmetry");
    expect(await page.getByLabel("Degrees of freedom").inputValue()).toBe("kenward-roger");
    expect(await page.getByLabel("Primary visit", { exact: true }).inputValue()).toBe("Week 16");
    expect(await page.locator('input[name="interaction"][value="BASE|AVISIT"]').isChecked()).toBe(true);
    await page.context().close();
  });
});
