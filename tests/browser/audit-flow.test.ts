/**
 * The biostatistician's audit in a real browser with the demo study: one biostatistician
 * writes the plan, a second approves it, the first reruns the primary model, sees the planted
 * findings, assesses them and runs a planned sensitivity analysis; the second signs.
 */
import type { Browser, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { drawAllFigures, hoverForSubject, launchBrowser, screenshot, signInAs } from "../support/browser";
import { testDb } from "../support/sessions";

const stack = inject("stack");
let browser: Browser;

beforeAll(async () => {
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

async function as(name: string): Promise<Page> {
  const context = await browser.newContext({ viewport: { width: 1360, height: 900 } });
  const page = await context.newPage();
  await signInAs(page, stack.appUrl, name);
  await page.getByRole("link", { name: "QMT-301" }).click();
  await page.getByRole("navigation", { name: "Study sections" }).waitFor();
  return page;
}

// Each step is a whole user journey (several pages, reruns, figures drawn): a minute is its budget, not a timing target.
describe("from plan to signature", { timeout: 90_000 }, () => {
  let planUrl = "";
  let rerunUrl = "";

  it("a biostatistician writes the plan with the primary model", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Analysis plans" }).click();
    await page.getByLabel("Title").fill("Efficacy models");
    await page.getByLabel("SAP document").fill("Statistical analysis plan QMT-301");
    await page.getByLabel("SAP version").fill("2.0");
    await page.getByLabel("SAP date").fill("2026-10-01");
    await page.getByRole("button", { name: "Start the plan" }).click();
    await page.getByRole("link", { name: "Add a planned model" }).click();
    // Submitting an empty form names the fields to fix.
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page.getByText(/fields need attention/).waitFor();
    expect(await page.getByText("Choose the endpoint (response) column.").count()).toBe(1);
    await page.getByLabel("Key").fill("primary");
    await page.getByLabel("Title").fill("Primary efficacy: change from baseline at week 12");
    await page.getByRole("button", { name: "Add a population condition" }).click();
    await page.locator("#pm-pop-0-column").selectOption("fasfl");
    await page.locator('input[name="population:0:value"][value="Y"]').check();
    await page.getByLabel("Endpoint (response)").selectOption("chg");
    await page.getByLabel("Treatment variable").selectOption("arm");
    await page.getByLabel("Reference arm").selectOption("Placebo");
    await page.getByLabel("Subject identifier").selectOption("subjid");
    for (const c of ["base", "stratum", "region", "sex", "age"]) await page.locator(`#cov-${c}`).check();
    await page.locator('input[name="sensitivity:exclude_influential"]').check();
    await screenshot(page, "plan-editor");
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page.getByRole("heading", { name: /primary\s*Primary efficacy/ }).waitFor();
    // The two secondary endpoints: responders (logistic) and flare counts (Poisson with log exposure).
    for (const m of [
      {
        key: "responder",
        title: "Responders at week 12",
        response: "resp",
        family: "binomial",
        covariates: ["base", "stratum", "region", "sex", "age"],
        offset: "",
      },
      {
        key: "flares",
        title: "Flare rate over the treatment period",
        response: "flares",
        family: "poisson",
        covariates: ["stratum", "region"],
        offset: "logexp",
      },
    ]) {
      await page.getByRole("link", { name: "Add a planned model" }).click();
      await page.getByLabel("Key").fill(m.key);
      await page.getByLabel("Title").fill(m.title);
      await page.getByRole("button", { name: "Add a population condition" }).click();
      await page.locator("#pm-pop-0-column").selectOption("fasfl");
      await page.locator('input[name="population:0:value"][value="Y"]').check();
      await page.getByLabel("Endpoint (response)").selectOption(m.response);
      await page.getByLabel("Family").selectOption(m.family);
      await page.getByLabel("Treatment variable").selectOption("arm");
      await page.getByLabel("Reference arm").selectOption("Placebo");
      await page.getByLabel("Subject identifier").selectOption("subjid");
      for (const c of m.covariates) await page.locator(`#cov-${c}`).check();
      if (m.offset) {
        await page.getByLabel("Offset").selectOption(m.offset);
        await page.locator('input[name="sensitivity:negative_binomial"]').check();
      }
      await page.getByRole("button", { name: "Save planned model" }).click();
      await page.getByRole("heading", { name: new RegExp(`${m.key}\\s*${m.title}`) }).waitFor();
    }
    await page.getByRole("button", { name: "Submit for approval" }).click();
    await page.getByText("Awaiting approval").first().waitFor();
    planUrl = page.url();
    // The author cannot approve her own plan.
    expect(await page.getByRole("button", { name: /Approve version/ }).count()).toBe(0);
    await page.context().close();
  });

  it("a second biostatistician approves it", async () => {
    const page = await as("Tomas Berg");
    await page.goto(planUrl);
    await page.getByRole("button", { name: "Approve version 1" }).click();
    // the approval row reads "not yet" until the approval is recorded
    await expect.poll(() => page.getByTestId("plan-approval").innerText()).not.toBe("not yet");
    await screenshot(page, "plan-approved");
    await page.context().close();
  });

  it("the first reruns the primary model, sees the planted findings and assesses them", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Reruns" }).click();
    // This plan's primary model: other test files may have approved plans with a model of the same key.
    const planVersionId = new URL(planUrl).pathname.split("/").pop() ?? "";
    const rs = await testDb(stack).execute({
      sql: "SELECT id FROM planned_models WHERE plan_version_id = ? AND key = 'primary'",
      args: [planVersionId],
    });
    await page.getByLabel("Approved planned model").selectOption(String(rs.rows[0]?.[0] ?? ""));
    await page.getByRole("button", { name: "Rerun" }).click();
    await page.getByRole("heading", { name: "Checks of the plan" }).waitFor({ timeout: 10_000 });
    rerunUrl = page.url().split("#")[0];
    await screenshot(page, "rerun-results");
    for (const check of [
      "Cook's distance",
      "Constant variance (Breusch–Pagan)",
      "Equal spread across arms (Brown–Forsythe)",
    ]) {
      const card = page.locator("article", { has: page.getByRole("heading", { name: check, exact: true }) });
      expect(await card.getByText("Finding", { exact: true }).count()).toBe(1);
    }
    expect(await page.getByText("QMT301-0217").count()).toBeGreaterThan(0);
    // every figure draws, and hovering a point names its subject and data row
    const states = await drawAllFigures(page);
    expect(states.length).toBeGreaterThanOrEqual(10);
    expect(states.every((s) => s === "ready")).toBe(true);
    // drawn off the main thread, by the figure worker the page's HTML starts (figure-worker-start.tsx)
    expect(
      await page.evaluate(() =>
        performance.getEntriesByType("resource").some((r) => /\/figure-worker-[\w-]+\.js$/.test(r.name)),
      ),
    ).toBe(true);
    // a linear model has no binomial fit figures
    expect(await page.getByRole("region", { name: "Fit of the binomial model" }).count()).toBe(0);
    const tip = await hoverForSubject(page, "residuals_fitted");
    expect(tip).toMatch(/Subject\s+QMT301-\d{4}/);
    expect(tip).toMatch(/Data row\s+\d+/);
    expect(tip).toMatch(/Residual\s+−?\d/);
    await screenshot(page, "rerun-results-figures");
    // What-if: leave out the planted influential subject and see the contrast move at once, in the page.
    const whatIf = page.getByRole("region", { name: "What-if for influential subjects" });
    await whatIf.getByLabel(/QMT301-0217/).check();
    await whatIf.getByRole("columnheader", { name: "Without 1 ticked" }).waitFor();
    await whatIf.scrollIntoViewIfNeeded();
    await page.screenshot({
      path: "test-results/screenshots/what-if.png",
      clip: (await whatIf.boundingBox()) ?? undefined,
    });
    await whatIf.getByRole("button", { name: "Keep as a sensitivity rerun" }).click();
    await page
      .getByRole("link", { name: /Excluding 1 subject/ })
      .first()
      .waitFor({ timeout: 10_000 });
    expect(await page.getByText("(not pre-specified)").count()).toBeGreaterThan(0);
    // the planned sensitivity analyses ran with the primary, without a click; the page shows their progress
    expect(await page.getByRole("button", { name: "Run it" }).count()).toBe(0);
    await page
      .getByRole("link", { name: /Excluding \d+ subjects/ })
      .first()
      .waitFor({ timeout: 30_000 });
    const open = () => page.getByRole("button", { name: "Record the assessment" }).count();
    expect(await open()).toBeGreaterThan(2);
    for (let guard = 0; guard < 20 && (await open()) > 0; guard++) {
      const before = await open();
      const form = page
        .locator("form", { has: page.getByRole("button", { name: "Record the assessment" }) })
        .first();
      await form.getByLabel("Category").selectOption("model_assumption");
      await form.getByLabel("Impact on the treatment conclusion").selectOption("none");
      await form.getByLabel("Action taken").selectOption("planned_sensitivity");
      await form
        .getByLabel("Rationale")
        .fill("The planned sensitivity analyses leave the treatment conclusion unchanged.");
      await form.getByRole("button", { name: "Record the assessment" }).click();
      await expect.poll(open, { timeout: 30_000 }).toBeLessThan(before); // the server may be running the planned sensitivity analyses meanwhile
    }
    expect(await open()).toBe(0);
    expect(await page.getByText("You started this rerun or assessed its findings").count()).toBe(1);
    await page.context().close();
  });

  it("the secondary endpoints rerun as generalized linear models, with the planted overdispersion found", async () => {
    const page = await as("Priya Lindqvist");
    for (const key of ["responder", "flares"]) {
      await page.getByRole("link", { name: "Reruns" }).click();
      const value = await page.locator("#rr-model option", { hasText: `${key} ·` }).getAttribute("value");
      await page.getByLabel("Approved planned model").selectOption(value ?? "");
      await page.getByRole("button", { name: "Rerun" }).click();
      await page.getByRole("heading", { name: "Checks of the plan" }).waitFor({ timeout: 15_000 });
      const fit = page.getByRole("region", { name: "Fit of the binomial model" });
      if (key === "responder") {
        // the binomial model's own figures: binned residuals and calibration by tenth of predicted risk
        for (const figure of ["binned_residuals", "calibration"]) {
          const frame = fit.locator(`[data-figure="${figure}"]`);
          await frame.scrollIntoViewIfNeeded();
          await expect.poll(() => frame.getAttribute("data-state"), { timeout: 20_000 }).toBe("ready");
        }
        expect(
          await fit.locator('[data-figure="binned_residuals"] [role="img"]').getAttribute("aria-label"),
        ).toMatch(
          /^Do observed proportions follow the fitted probabilities\?\. Healthy: about 95% of bins inside the band.* \d+ of \d+ bins lie outside their band/,
        );
        expect(
          await fit.locator('[data-figure="calibration"] [role="img"]').getAttribute("aria-label"),
        ).toMatch(/Hosmer–Lemeshow statistic [\d.]+ on 8 degrees of freedom/);
        // the groups behind the calibration figure, as a table beside it
        expect(await fit.getByRole("table").locator("tbody tr").count()).toBe(10);
        const tip = await hoverForSubject(page, "binned_residuals");
        expect(tip).toMatch(/Mean residual\s+−?\d/);
        await page.mouse.move(0, 0);
        await fit.scrollIntoViewIfNeeded();
        await page.screenshot({
          path: "test-results/screenshots/rerun-results-binomial-fit.png",
          clip: (await fit.boundingBox()) ?? undefined,
        });
        expect((await drawAllFigures(page)).every((s) => s === "ready")).toBe(true);
        await screenshot(page, "rerun-results-binomial");
      } else {
        expect(await fit.count()).toBe(0);
        expect(
          await page.locator('[data-figure="binned_residuals"], [data-figure="calibration"]').count(),
        ).toBe(0);
      }
      if (key === "flares") {
        const card = page.locator("article", {
          has: page.getByRole("heading", { name: "Overdispersion", exact: true }),
        });
        expect(await card.getByText("Finding", { exact: true }).count()).toBe(1);
        // every figure of the count model draws, each check with its own figure or none
        await drawAllFigures(page);
        await screenshot(page, "rerun-results-counts");
        const notDrawn = await page
          .locator("[data-figure]")
          .evaluateAll((els) =>
            els
              .filter((el) => (el as HTMLElement).dataset.state !== "ready")
              .map((el) => `${(el as HTMLElement).dataset.figure}: ${el.textContent}`),
          );
        expect(notDrawn).toEqual([]);
      }
    }
    await page.context().close();
  });

  it("the second biostatistician signs, and the deviation log lists every assessment", async () => {
    const page = await as("Tomas Berg");
    await page.goto(rerunUrl);
    await page.getByRole("button", { name: "Sign this rerun" }).click();
    await page.getByText(/Tomas Berg · “Reviewed and approved”/).waitFor();
    await screenshot(page, "rerun-signed");
    await page.getByRole("link", { name: "Deviation log" }).click();
    await page.getByRole("heading", { name: "Deviation log" }).waitFor();
    expect(await page.locator("tbody tr").count()).toBeGreaterThan(2);
    await screenshot(page, "deviation-log");
    await page.context().close();
  });
});
