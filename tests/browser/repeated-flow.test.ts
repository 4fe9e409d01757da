/**
 * A repeated-measures (MMRM) analysis from plan to appendix in a real browser: the data manager
 * locks the demo's visit-level dataset (advisits.csv, invented); a biostatistician plans the MMRM
 * (change from baseline at weeks 2–12, unstructured covariance with fallbacks, Satterthwaite df,
 * primary visit week 12), a second approves it; the first reruns it, reads the contrasts per visit
 * (checked against R's nlme::gls and emmeans on the same file), sees the four figures, and assesses
 * the findings; the second signs; the medical writer's appendix carries the repeated-measures
 * tables and figures and names no subject.
 */
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, afterEach, beforeAll, describe, expect, inject, it } from "vitest";
import { demoVisitsCsv } from "~/.server/demo/demo-visits";
import { drawAllFigures, launchBrowser, screenshot, signInAs } from "../support/browser";
import { createStudyWithTeam } from "../support/study-team";

const stack = inject("stack");
// The study of this file (MMR-301) is made through the services on the stack's database, so its
// dataset, plan and signed rerun never change what other browser tests find in QMT-301.
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");
const STUDY = "MMR-301";

/** R's nlme::gls (REML, corSymm + varIdent) and emmeans contrasts on the same file: tests/reference/repeated/generate-demo.R. */
const R = JSON.parse(readFileSync("tests/reference/repeated/values-demo/advisits.json", "utf8")) as {
  contrasts: { label: string; visit: string; estimate: number; se: number; lower: number; upper: number }[];
};
const minus = (s: string) => s.replace(/^-/, "−");

async function repeatedMeasuresStudy(): Promise<void> {
  await createStudyWithTeam(stack, { code: STUDY, title: "Itch burden over the visits" }, [
    ["dana.okafor@plumbline.example", "data_manager"],
    ["priya.lindqvist@plumbline.example", "biostatistician"],
    ["tomas.berg@plumbline.example", "biostatistician"],
    ["helen.achter@plumbline.example", "medical_writer"],
  ]);
}

let browser: Browser;
const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-mmrm-flow-"));

beforeAll(async () => {
  writeFileSync(path.join(dir, "advisits.csv"), demoVisitsCsv());
  await repeatedMeasuresStudy();
  browser = await launchBrowser();
}, 120_000);
afterAll(async () => {
  await browser?.close();
});
let current: Page | null = null;
afterEach(async (ctx) => {
  if (ctx.task.result?.state === "fail" && current && !current.isClosed())
    await screenshot(current, `mmrm-flow-failed-${ctx.task.name.slice(0, 30).replace(/\W+/g, "-")}`);
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

describe("a mixed model for repeated measures from plan to appendix", () => {
  let planUrl = "";
  let rerunUrl = "";

  it("the data manager uploads and locks the visit-level dataset", async () => {
    const page = await as("Dana Okafor");
    await page
      .getByRole("navigation", { name: "Study sections" })
      .getByRole("link", { name: "Datasets" })
      .click();
    await page.getByLabel("File").setInputFiles(path.join(dir, "advisits.csv"));
    await page.getByRole("button", { name: "Upload and check" }).click();
    await page.getByRole("heading", { name: "advisits · version 1" }).waitFor({ timeout: 30_000 });
    const reasons = page.getByLabel("Why it is not an identifier");
    for (let guard = 0; guard < 10 && (await reasons.count()) > 0; guard++) {
      const before = await reasons.count();
      await reasons.first().fill("Pseudonymous study code of invented demo subjects");
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

  it("a biostatistician plans the MMRM and submits it; a second approves it", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Analysis plans" }).click();
    await page.getByLabel("Title").fill("Efficacy over the visits");
    await page.getByLabel("SAP document").fill("Statistical analysis plan MMR-301");
    await page.getByLabel("SAP version").fill("3.0");
    await page.getByLabel("SAP date").fill("2026-11-20");
    await page.getByRole("button", { name: "Start the plan" }).click();
    await page.getByRole("link", { name: "Add a planned model" }).click();
    await page.getByLabel("Key").fill("mmrm");
    await page.getByLabel("Title").fill("Change from baseline in the itch score over the visits");
    await page.getByLabel("Locked dataset").selectOption("advisits");
    await page.getByLabel("Family").selectOption("repeated");
    await page.getByLabel("Endpoint (change from baseline at each visit)").selectOption("chg");
    await page.getByLabel("Treatment variable").selectOption("arm");
    await page.getByLabel("Reference arm").selectOption("Placebo");
    await page.getByLabel("Subject identifier").selectOption("subjid");
    await page.getByLabel("Visit", { exact: true }).selectOption("avisit");
    await page.getByLabel("Visit order (optional)").selectOption("avisitn");
    await page.getByLabel("First fallback structure").selectOption("toeplitz");
    await page.getByLabel("Second fallback structure").selectOption("ar1");
    await page.getByLabel("Primary visit", { exact: true }).selectOption("Week 12");
    await page.locator("#cov-base").check();
    await page.locator("#cov-stratum").check();
    await page.getByRole("button", { name: "Add avisit (categorical)" }).click();
    await page.getByRole("button", { name: "Add arm × avisit" }).click();
    await page.getByRole("button", { name: "Add base × avisit" }).click();
    await page.locator('input[name="sensitivity:repeated_structure"]').check();
    await page
      .getByLabel("Covariance structure of the sensitivity analysis")
      .selectOption("toeplitz-heterogeneous");
    await screenshot(page, "mmrm-flow-plan-editor");
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page.getByRole("heading", { name: /mmrm\s*Change from baseline in the itch score/ }).waitFor();
    await page.getByText("avisit, ordered by avisitn").waitFor();
    await page.getByRole("button", { name: "Submit for approval" }).click();
    await page.getByText("Awaiting approval").first().waitFor();
    planUrl = page.url();
    await page.context().close();

    const second = await as("Tomas Berg");
    await second.goto(planUrl);
    await second.getByRole("button", { name: /Approve version/ }).click();
    // the approval row reads "not yet" until the approval is recorded
    await expect.poll(() => second.getByTestId("plan-approval").innerText()).not.toBe("not yet");
    await second.context().close();
  }, 120_000);

  it("the first reruns it: R's contrasts per visit, the structure used, four figures, and the findings assessed", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Reruns" }).click();
    const value = await page.locator("#rr-model option", { hasText: "mmrm ·" }).getAttribute("value");
    await page.getByLabel("Approved planned model").selectOption(value ?? "");
    await page.getByRole("button", { name: "Rerun" }).click();
    await page.getByRole("heading", { name: "Checks of the plan" }).waitFor({ timeout: 60_000 });
    rerunUrl = page.url().split("#")[0];
    await page.getByRole("heading", { name: "Covariance of the visits within a subject" }).waitFor();
    // every contrast per visit as R's gls and emmeans give it on the same file, to the page's three decimals
    const effect = page.getByRole("region", { name: "Treatment effect by visit" });
    for (const c of R.contrasts) {
      const label = c.label.replace(" - ", " vs ");
      const row = effect
        .getByRole("row")
        .filter({ has: page.getByRole("rowheader", { name: label, exact: true }) })
        .filter({ hasText: c.visit + (c.visit === "Week 12" ? " · primary" : "") })
        .first();
      const text = (await row.innerText()).replace(/\s+/g, " ");
      expect(text, `${label} at ${c.visit}`).toContain(minus(c.estimate.toFixed(3)));
      expect(text, `SE of ${label} at ${c.visit}`).toContain(c.se.toFixed(3));
      expect(text, `CI of ${label} at ${c.visit}`).toContain(
        `${minus(c.lower.toFixed(3))} to ${minus(c.upper.toFixed(3))}`,
      );
    }
    await screenshot(page, "mmrm-flow-results");
    const states = await drawAllFigures(page);
    expect(states.length).toBeGreaterThanOrEqual(4);
    expect(states.every((s) => s === "ready")).toBe(true);
    for (const key of ["repeated_residuals_fitted", "repeated_qq", "repeated_means", "repeated_influence"])
      expect(await page.locator(`[data-figure="${key}"]`).count(), key).toBeGreaterThan(0);
    await screenshot(page, "mmrm-flow-results-figures");
    // the planted subject of the demo (QMT301-0217) is flagged by the subject-influence check
    await page.getByText("QMT301-0217").first().waitFor();
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
        .fill(
          "Judged on the residual and influence figures; the week-12 contrast is unchanged in direction.",
        );
      await form.getByRole("button", { name: "Record the assessment" }).click();
      await expect.poll(open, { timeout: 30_000 }).toBeLessThan(before);
    }
    expect(await open()).toBe(0);
    // the planned sensitivity analysis with another structure runs by itself and completes
    const sensitivity = page.getByRole("listitem").filter({ hasText: "Another covariance structure" });
    await sensitivity.getByText("Completed", { exact: true }).waitFor({ timeout: 60_000 });
    await page
      .getByText(/do not replace/)
      .first()
      .waitFor();
    await page.context().close();
  }, 180_000);

  it("the second signs, and the medical writer's appendix carries the MMRM tables and figures, naming no subject", async () => {
    const page = await as("Tomas Berg");
    await page.goto(rerunUrl);
    await page.getByRole("button", { name: "Sign this rerun" }).click();
    await page.getByText(/Tomas Berg · “Reviewed and approved”/).waitFor();
    await page.context().close();
    const writer = await as("Helen Achter");
    const rerunId = rerunUrl.split("/").at(-1) ?? "";
    await writer.goto(`${rerunUrl.split("/reruns/")[0]}/appendix?rerun=${encodeURIComponent(rerunId)}`);
    await writer.getByRole("article", { name: "Preview of the appendix" }).waitFor({ timeout: 60_000 });
    for (const key of [
      "fit",
      "visit-covariance",
      "coefficients",
      "adjusted-means",
      "contrasts",
      "repeated-tests",
    ])
      expect(await writer.locator(`[data-table-key="${key}:${rerunId}"]`).count(), key).toBe(1);
    const primary = R.contrasts.find(
      (c) => c.visit === "Week 12" && c.label.startsWith("Lorvanitide 120 mg"),
    )!;
    expect(
      await writer
        .locator(`[data-table-key="contrasts:${rerunId}"]`)
        .getByText(minus(primary.estimate.toFixed(3)))
        .count(),
    ).toBeGreaterThan(0);
    for (const key of ["repeated_residuals_fitted", "repeated_qq", "repeated_means", "repeated_influence"])
      expect(await writer.locator(`[data-figure-key^="${key}:"] img`).count(), key).toBeGreaterThan(0);
    expect(await writer.getByText(/QMT301-\d{4}/).count()).toBe(0);
    await screenshot(writer, "mmrm-flow-appendix");
    await writer.context().close();
  }, 120_000);
});
