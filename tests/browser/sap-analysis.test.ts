/**
 * A long dataset's primary analysis stated as the SAP states it, in a real browser: the data
 * manager locks an invented long dataset (a record per subject, parameter and visit); a
 * biostatistician plans the ANCOVA of the change at visit 24 with a population of five
 * conditions, adjusted means weighted by observed proportions, contrasts between every pair of
 * arms and Holm's adjustment (errors shown beside the fields first); a second approves it; the
 * first reruns it and the page shows R's values (tests/reference/sap/generate.R: lm, emmeans,
 * car::Anova, p.adjust). Then the page, the API answer and the headless command, fed the planned
 * model's specification as the API gives it, agree, and so does the Word appendix once signed.
 */
import { execFile } from "node:child_process";
import { copyFileSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, afterEach, beforeAll, describe, expect, inject, it } from "vitest";
import { fmt, fmtCi, fmtP } from "~/shared/format";
import { launchBrowser, screenshot, signInAs } from "../support/browser";
import { personId } from "../support/sessions";

const stack = inject("stack");
// The study of this file (SAP-301) is made through the services on the stack's database, so its
// dataset, plan and reruns never change what other browser tests find in QMT-301.
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");
const STUDY = "SAP-301";
const REF = path.resolve("tests/reference/sap");
const DATA = path.join(REF, "data", "long-trial.csv");

interface RContrasts {
  label: string[];
  estimate: number[];
  se: number[];
  lower: number[];
  upper: number[];
  statistic: number[];
  p: number[];
  pAdjusted: { holm: number[] };
}
const ref = JSON.parse(readFileSync(path.join(REF, "values", "long-ancova.json"), "utf8")) as {
  n: number;
  population: { excluded: number; removed: number[] };
  treatment: { statistic: number; df1: number; df2: number; p: number };
  results: { means: string; contrasts: string; model: RContrasts; hc3: RContrasts }[];
};
const planned = ref.results.find((r) => r.means === "proportional" && r.contrasts === "pairwise");
if (!planned) throw new Error("the reference values lack the planned case");
const R = planned.model;

async function sapStudy(): Promise<void> {
  const { createStudy } = await import("~/.server/studies.server");
  const { setStudyRole } = await import("~/.server/people.server");
  const admin = {
    id: await personId(stack, "morgan.reyes@plumbline.example"),
    name: "Morgan Reyes",
    organisation: null,
  };
  const created = await createStudy(admin, {
    code: STUDY,
    title: "A long dataset analysed as the SAP states it",
    sponsor: "Quillmoor Therapeutics",
    compound: null,
    indication: null,
    phase: "3",
  });
  if (!created.ok) throw new Error(JSON.stringify(created.fieldErrors));
  const roles = [
    ["dana.okafor@plumbline.example", "data_manager"],
    ["priya.lindqvist@plumbline.example", "biostatistician"],
    ["tomas.berg@plumbline.example", "biostatistician"],
  ] as const;
  for (const [email, role] of roles)
    await setStudyRole(admin, created.study.id, await personId(stack, email), role);
}

let browser: Browser;
const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-sap-"));

beforeAll(async () => {
  copyFileSync(DATA, path.join(dir, "adqs.csv"));
  await sapStudy();
  browser = await launchBrowser();
}, 120_000);
afterAll(async () => {
  await browser?.close();
});
let current: Page | null = null;
afterEach(async (ctx) => {
  if (ctx.task.result?.state === "fail" && current && !current.isClosed())
    await screenshot(current, `sap-failed-${ctx.task.name.slice(0, 30).replace(/\W+/g, "-")}`);
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

function runCli(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(
      path.resolve("node_modules/.bin/tsx"),
      [path.resolve("app/cli.ts"), ...args],
      { cwd: path.resolve(".") },
      (err, stdout, stderr) => {
        resolve({ code: err ? (typeof err.code === "number" ? err.code : 1) : 0, stdout, stderr });
      },
    );
  });
}

describe("a long dataset's primary analysis as the SAP states it", () => {
  let planUrl = "";
  let rerunUrl = "";
  const pageValues: { label: string; cells: string[] }[] = [];
  let pageTest = "";

  it("the data manager uploads and locks the long dataset", async () => {
    const page = await as("Dana Okafor");
    await page
      .getByRole("navigation", { name: "Study sections" })
      .getByRole("link", { name: "Datasets" })
      .click();
    await page.getByLabel("File").setInputFiles(path.join(dir, "adqs.csv"));
    await page.getByRole("button", { name: "Upload and check" }).click();
    await page.getByRole("heading", { name: "adqs · version 1" }).waitFor({ timeout: 30_000 });
    const reasons = page.getByLabel("Why it is not an identifier");
    for (let guard = 0; guard < 10 && (await reasons.count()) > 0; guard++) {
      const before = await reasons.count();
      await reasons.first().fill("Invented test data: generated subject and site codes, no real people");
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
  }, 90_000);

  it("a biostatistician states the population, weighting, pairwise contrasts and Holm's adjustment in the forms", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Analysis plans" }).click();
    await page.getByLabel("Title").fill("Efficacy analyses");
    await page.getByLabel("SAP document").fill("Statistical analysis plan SAP-301");
    await page.getByLabel("SAP version").fill("1.0");
    await page.getByLabel("SAP date").fill("2026-11-02");
    await page.getByRole("button", { name: "Start the plan" }).click();
    await page.getByRole("link", { name: "Add a planned model" }).click();
    await page.getByLabel("Key").fill("primary");
    await page.getByLabel("Title").fill("Change in the total score at week 24");
    await page.getByLabel("Locked dataset").selectOption("adqs");
    // five conditions: a flag with one value kept, a parameter code, a visit, an age range, a site left out
    const add = page.getByRole("button", { name: "Add a population condition" });
    for (let i = 0; i < 5; i++) await add.click();
    await page.locator("#pm-pop-0-column").selectOption("EFFFL");
    await page.locator('input[name="population:0:value"][value="Y"]').check();
    await page.locator("#pm-pop-1-column").selectOption("PARAMCD");
    await page.locator('input[name="population:1:value"][value="ACTOT"]').check();
    await page.locator("#pm-pop-2-column").selectOption("AVISITN");
    await page.locator('input[name="population:2:value"][value="24"]').check();
    await page.locator("#pm-pop-3-column").selectOption("AGE");
    await page.locator("#pm-pop-3-kind").selectOption("range");
    await page.getByLabel("From (lowest value kept)").fill("75");
    await page.getByLabel("To (highest value kept)").fill("18");
    await page.locator("#pm-pop-4-column").selectOption("SITEID");
    await page.locator("#pm-pop-4-kind").selectOption("notIn");
    await page.locator('input[name="population:4:value"][value="999"]').check();
    await page.getByLabel("Endpoint (response)").selectOption("CHG");
    await page.getByLabel("Treatment variable").selectOption("TRT01P");
    await page.getByLabel("Reference arm").selectOption("PBO");
    await page.getByLabel("Subject identifier").selectOption("USUBJID");
    for (const c of ["SITEGR1", "BASE"]) await page.locator(`#cov-${c}`).check();
    await page.getByLabel("In proportion to the observed frequencies").check();
    await page.getByLabel("Every pair of arms").check();
    await page.getByLabel("Holm (step-down)").check();
    // the limits are the wrong way round: the error stands beside the field
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page
      .getByText(/needs? attention/)
      .first()
      .waitFor();
    await page.getByText("The lowest value (75) is above the highest (18).").waitFor();
    expect(await page.locator("#pm-pop-3-min").getAttribute("aria-invalid")).toBe("true");
    await page.getByLabel("From (lowest value kept)").fill("18");
    await page.getByLabel("To (highest value kept)").fill("75");
    // the choices survived the refused save
    expect(await page.getByLabel("Holm (step-down)").isChecked()).toBe(true);
    expect(await page.locator('input[name="population:4:value"][value="999"]').isChecked()).toBe(true);
    await screenshot(page, "sap-plan-editor");
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page.getByRole("heading", { name: /primary\s*Change in the total score at week 24/ }).waitFor();
    await page
      .getByText("EFFFL in Y; PARAMCD in ACTOT; AVISITN in 24; AGE from 18 to 75; SITEID not in 999")
      .waitFor();
    await page.getByText("every pair of arms").first().waitFor();
    await page.getByText("Holm (step-down)").first().waitFor();
    await page.getByRole("button", { name: "Submit for approval" }).click();
    await page.getByText("Awaiting approval").first().waitFor();
    planUrl = page.url();
    await page.context().close();
  }, 120_000);

  it("a second biostatistician approves it", async () => {
    const page = await as("Tomas Berg");
    await page.goto(planUrl);
    await page.getByRole("button", { name: /Approve version/ }).click();
    // the approval row reads "not yet" until the approval is recorded
    await expect.poll(() => page.getByTestId("plan-approval").innerText()).not.toBe("not yet");
    await page.context().close();
  });

  it("the rerun's page shows R's pairwise contrasts, Holm-adjusted p, the treatment F and the rows each condition removed", async () => {
    const page = await as("Priya Lindqvist");
    await page.getByRole("link", { name: "Reruns" }).click();
    const value = await page.locator("#rr-model option", { hasText: "primary ·" }).getAttribute("value");
    await page.getByLabel("Approved planned model").selectOption(value ?? "");
    await page.getByRole("button", { name: "Rerun" }).click();
    await page.getByRole("heading", { name: "Checks of the plan" }).waitFor({ timeout: 60_000 });
    rerunUrl = page.url().split("#")[0];
    const table = page
      .getByRole("table")
      .filter({ hasText: "Treatment contrasts between every pair of arms" });
    await table.waitFor();
    expect(await table.getByRole("columnheader", { name: "p adjusted (Holm)", exact: true }).count()).toBe(1);
    for (let k = 0; k < R.label.length; k++) {
      const row = table
        .getByRole("row")
        .filter({ has: page.getByRole("rowheader", { name: R.label[k], exact: true }) });
      const cells = (await row.getByRole("cell").allInnerTexts()).map((s) => s.trim());
      // Difference, SE, 95% CI, p, p adjusted (Holm): emmeans with weights = "proportional", p.adjust(method = "holm")
      expect(cells.slice(0, 5), R.label[k]).toEqual([
        fmt(R.estimate[k]),
        fmt(R.se[k]),
        fmtCi(R.lower[k], R.upper[k]),
        fmtP(R.p[k]),
        fmtP(R.pAdjusted.holm[k]),
      ]);
      pageValues.push({ label: R.label[k], cells });
    }
    // car::Anova(type = 2): the overall F of the treatment term
    pageTest = `Overall test of TRT01P: F = ${fmt(ref.treatment.statistic)} on ${ref.treatment.df1} and ${ref.treatment.df2} df`;
    await page.getByText(pageTest).waitFor();
    await page.getByText(`${ref.n} used`).waitFor();
    await page.getByText(`EFFFL in Y: ${ref.population.removed[0]} removed`).waitFor();
    await page
      .getByText(/do not replace/)
      .first()
      .waitFor();
    const effect = page.getByRole("region", { name: "Treatment effect", exact: true });
    await page.screenshot({
      path: "test-results/screenshots/sap-treatment-effect.png",
      clip: (await effect.boundingBox()) ?? undefined,
    });
    await screenshot(page, "sap-rerun-results");
    await page.context().close();
  }, 120_000);

  it("the page, the API answer and the headless command fed the planned model's specification agree", async () => {
    const { createToken } = await import("~/.server/api/tokens.server");
    const priya = {
      id: await personId(stack, "priya.lindqvist@plumbline.example"),
      name: "Priya Lindqvist",
      organisation: null,
    };
    const made = await createToken(priya, { name: "validation script", days: 7 });
    if (!made.ok) throw new Error(made.message);
    const get = async (p: string) => {
      const res = await fetch(`${stack.appUrl}${p}`, { headers: { Authorization: `Bearer ${made.token}` } });
      expect(res.status, p).toBe(200);
      return res.json();
    };
    const [, studyId, , rerunId] = new URL(rerunUrl).pathname.split("/").filter(Boolean);
    const versionId = new URL(planUrl).pathname.split("/").filter(Boolean).at(-1);
    const api = await get(`/api/v1/studies/${studyId}/reruns/${rerunId}`);
    expect(api.caution).toMatch(/do not replace/);
    const plan = await get(`/api/v1/studies/${studyId}/plan-versions/${versionId}`);
    const spec = plan.plannedModels[0].spec;
    expect(spec).toMatchObject({ means: "proportional", contrasts: "pairwise", multiplicity: "holm" });
    expect(spec.population).toHaveLength(5);
    const modelFile = path.join(dir, "model.json");
    writeFileSync(modelFile, JSON.stringify(spec));
    const run = await runCli(["fit", "--data", DATA, "--model", modelFile]);
    expect(run.code, run.stderr).toBe(0);
    const cli = JSON.parse(run.stdout);

    expect(api.results.n).toBe(ref.n);
    expect(cli.n).toBe(ref.n);
    expect(cli.excludedByPopulation).toBe(ref.population.excluded);
    expect(api.results.rows.outsidePopulation).toBe(ref.population.excluded);
    expect(api.results.population.map((s: { removed: number }) => s.removed)).toEqual(ref.population.removed);
    expect(api.results.treatmentEffect).toMatchObject({ contrastSet: "pairwise", multiplicity: "holm" });
    expect(api.results.treatmentEffect.test.statistic).toBe(cli.tests.treatment.statistic);
    expect(api.results.treatmentEffect.test.df1).toBe(cli.tests.treatment.df1);
    expect(api.results.treatmentEffect.test.df2).toBe(cli.tests.treatment.df2);
    expect(api.results.contrasts.map((c: { label: string }) => c.label)).toEqual(R.label);
    expect(cli.contrasts.map((c: { label: string }) => c.label)).toEqual(R.label);
    api.results.contrasts.forEach(
      (
        c: {
          estimate: number;
          se: number;
          lower: number;
          upper: number;
          statistic: number;
          p: number;
          pAdjusted: number;
        },
        k: number,
      ) => {
        const x = cli.contrasts[k];
        // the same numbers, bit for bit: one engine, one specification
        expect([c.estimate, c.se, c.lower, c.upper, c.statistic, c.p, c.pAdjusted]).toEqual([
          x.estimate,
          x.se,
          x.lower,
          x.upper,
          x.statistic,
          x.p,
          x.pAdjusted,
        ]);
        const shown = pageValues[k].cells.slice(0, 5);
        expect(shown).toEqual([
          fmt(c.estimate),
          fmt(c.se),
          fmtCi(c.lower, c.upper),
          fmtP(c.p),
          fmtP(c.pAdjusted),
        ]);
      },
    );

    // the Word appendix of the signed rerun: the same contrasts, the method named
    const findings = await import("~/.server/reruns/findings.server");
    for (const f of await findings.findingsOf(rerunId)) {
      await findings.assessFinding(priya, studyId, f.id, {
        category: "model_assumption",
        impact: "none",
        action: "none",
        rationale: "Invented data; the treatment conclusion is unchanged.",
      });
    }
    const tomas = {
      id: await personId(stack, "tomas.berg@plumbline.example"),
      name: "Tomas Berg",
      organisation: null,
      signedInAt: new Date().toISOString(),
    };
    await findings.signRerun(tomas, studyId, rerunId);
    const { buildAppendixContent } = await import("~/.server/appendix/build-content.server");
    const content = await buildAppendixContent(studyId, { kind: "rerun", rerunId });
    const blocks = content.sections.flatMap((x) => x.blocks);
    const table = blocks.find((b) => b.kind === "table" && b.key === `contrasts:${rerunId}`);
    if (!table || table.kind !== "table") throw new Error("the appendix has no contrasts table");
    expect(table.caption).toMatch(/between every pair of arms/);
    expect(table.columns.map((c) => c.label)).toContain("p adjusted (Holm)");
    expect(table.note).toMatch(/Holm method/);
    expect(table.note).toContain(pageTest);
    table.rows.forEach((row, k) => {
      expect(row[0]).toBe(R.label[k]);
      expect([row[1], row[2], row[3], row[5], row[6]]).toEqual(pageValues[k].cells.slice(0, 5));
    });
    const methods = blocks
      .filter((b) => b.kind === "paragraph")
      .map((b) => (b.kind === "paragraph" ? b.text : ""))
      .join(" ");
    expect(methods).toMatch(/Holm \(step-down\) method \(Holm 1979\)/);
    expect(methods).toContain("AGE from 18 to 75");
  }, 120_000);
});
