/**
 * The reproduction check in a real browser: a biostatistician enters the values a study report
 * printed in the planned-model editor (an empty value is refused beside its field), a second
 * approves the plan, the first reruns it and sees each value reproduced or not, with the check
 * among the checks of the plan and its finding awaiting assessment; once assessed and signed, the
 * report, the appendix and the API answer carry it too. The correctly printed value
 * is the engine's own High vs Placebo difference rounded as printed (the rounding and the engine
 * are checked against R in tests/reference/reproduction-reference.test.ts); the other is mistyped.
 */
import path from "node:path";
import Ajv2020 from "ajv/dist/2020.js";
import addFormats from "ajv-formats";
import type { Browser, Page } from "playwright-core";
import { afterAll, afterEach, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot, signInAs } from "../support/browser";
import { personId, sessionCookieFor, testDb } from "../support/sessions";

const stack = inject("stack");
// The study of this file (RPR-301) is made through the services on the stack's database, so its
// plan and reruns never change what other browser tests find in QMT-301.
process.env.DATABASE_URL = `file:${stack.dbFile}`;
process.env.DATA_DIR = stack.dataDir;
process.env.MIGRATIONS_DIR = path.resolve("drizzle");
const STUDY = "RPR-301";
const PRIYA = "priya.lindqvist@plumbline.example";
const TOMAS = "tomas.berg@plumbline.example";
const HIGH = "Lorvanitide 120 mg";
const LOW = "Lorvanitide 40 mg";

let browser: Browser;
let studyId = "";
let planPath = "";
/** The High vs Placebo difference as a report would print it (2 decimals, half away from zero). */
let printedHigh = "";
let rerunPath = "";

async function one(sql: string, args: (string | number)[]): Promise<string> {
  const rs = await testDb(stack).execute({ sql, args });
  return String(rs.rows[0]?.[0] ?? "");
}

async function post(cookie: string, where: string, fields: [string, string][]): Promise<string> {
  const res = await fetch(`${stack.appUrl}${where}`, {
    method: "POST",
    redirect: "manual",
    headers: { Cookie: cookie, Origin: stack.appUrl, "Content-Type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams(fields),
  });
  if (res.status >= 400)
    throw new Error(`POST ${where} answered ${res.status}: ${(await res.text()).slice(0, 300)}`);
  await res.body?.cancel();
  return res.headers.get("Location") ?? "";
}

/** A study of its own with the demo dataset locked, a draft plan with the primary model, and the reference value. */
async function reproductionStudy(): Promise<void> {
  const { createStudy } = await import("~/.server/studies.server");
  const { setStudyRole } = await import("~/.server/people.server");
  const { seedDemoDataset } = await import("~/.server/datasets/demo-seed.server");
  const { loadLockedTable } = await import("~/.server/datasets/catalog.server");
  const { fitLinear } = await import("~/engine");
  const { roundHalfAwayFromZero } = await import("~/engine/reproduction");
  const admin = {
    id: await personId(stack, "morgan.reyes@plumbline.example"),
    name: "Morgan Reyes",
    organisation: null,
  };
  const created = await createStudy(admin, {
    code: STUDY,
    title: "Reproduction of published values",
    sponsor: "Quillmoor Therapeutics",
    compound: null,
    indication: null,
    phase: "3",
  });
  if (!created.ok) throw new Error(JSON.stringify(created.fieldErrors));
  studyId = created.study.id;
  for (const [email, role] of [
    [PRIYA, "biostatistician"],
    [TOMAS, "biostatistician"],
  ] as const)
    await setStudyRole(admin, studyId, await personId(stack, email), role);
  const { versionId } = await seedDemoDataset(studyId);
  const { table } = await loadLockedTable(versionId);
  const keep = table.columns.fasfl.map((v, i) => (v === "Y" ? i : -1)).filter((i) => i >= 0);
  const columns = Object.fromEntries(
    Object.entries(table.columns).map(([k, v]) => [k, keep.map((i) => v[i])]),
  );
  const fit = fitLinear(
    {
      response: "chg",
      terms: [{ variable: "arm", categorical: true, reference: "Placebo" }, { variable: "base" }],
      treatment: "arm",
      id: "subjid",
    },
    { columns, rowNumbers: keep.map((i) => table.rowNumbers[i]) },
  );
  const high = fit.contrasts?.find((c) => c.level === HIGH);
  if (!high) throw new Error("The demo fit has no High vs Placebo contrast");
  printedHigh = roundHalfAwayFromZero(high.estimate, 2);

  const priya = await sessionCookieFor(stack, PRIYA);
  const base = `/studies/${studyId}`;
  const planUrl = await post(priya, `${base}/plans`, [
    ["title", "Reproduction test plan"],
    ["sapName", "SAP RPR-301"],
    ["sapVersion", "1.0"],
    ["sapDate", "2026-11-20"],
  ]);
  const planVersionId = planUrl.split("/").pop() ?? "";
  await post(priya, `${base}/plans/${planVersionId}/models/new`, [
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
  planPath = `${base}/plans/${planVersionId}`;
}

beforeAll(async () => {
  await reproductionStudy();
  browser = await launchBrowser();
}, 120_000);
afterAll(async () => {
  await browser?.close();
});
let current: Page | null = null;
afterEach(async (ctx) => {
  if (ctx.task.result?.state === "fail" && current && !current.isClosed())
    await screenshot(current, `reproduction-failed-${ctx.task.name.slice(0, 30).replace(/\W+/g, "-")}`);
});

async function as(name: string): Promise<Page> {
  const context = await browser.newContext({ viewport: { width: 1360, height: 900 } });
  const page = await context.newPage();
  current = page;
  page.setDefaultTimeout(15_000);
  await signInAs(page, stack.appUrl, name);
  return page;
}

describe("published values reproduced, or not, by the rerun", () => {
  it("a biostatistician enters the printed values in the editor; an empty value is refused beside its field", async () => {
    const page = await as("Priya Lindqvist");
    await page.goto(`${stack.appUrl}${planPath}`);
    await page.getByRole("link", { name: "Edit" }).click();
    const section = page.getByRole("group", { name: "Published values to reproduce" });
    await section.getByText("No published values: the rerun makes no reproduction check.").waitFor();
    await section.getByRole("button", { name: "Add a published value" }).click();
    const first = section.getByRole("group", { name: "Published value 1" });
    await first.getByLabel("Quantity").selectOption("contrast");
    await first.getByLabel("Arm", { exact: true }).selectOption(HIGH);
    await first.getByLabel("Number printed").selectOption("estimate");
    // saved without a value: the error stands beside the field and the field says so
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page
      .getByText(/needs? attention/)
      .first()
      .waitFor();
    const value1 = page.getByRole("group", { name: "Published value 1" }).getByLabel("Value as printed");
    expect(await value1.getAttribute("aria-invalid")).toBe("true");
    await page.getByText("Give the value exactly as the report printed it, e.g. -2.35 or <0.001.").waitFor();
    await value1.fill(printedHigh);
    // a second value, then a third removed again: rows are added and removed freely
    const published = page.getByRole("group", { name: "Published values to reproduce" });
    await published.getByRole("button", { name: "Add a published value" }).click();
    await published.getByRole("button", { name: "Add a published value" }).click();
    await published.getByRole("button", { name: "Remove published value 3" }).click();
    expect(await published.getByRole("group", { name: /^Published value \d$/ }).count()).toBe(2);
    const second = published.getByRole("group", { name: "Published value 2" });
    await second.getByLabel("Quantity").selectOption("contrast");
    await second.getByLabel("Arm", { exact: true }).selectOption(LOW);
    await second.getByLabel("Number printed").selectOption("estimate");
    await second.getByLabel("Value as printed").fill("99.99"); // mistyped
    await screenshot(page, "reproduction-editor");
    await page.getByRole("button", { name: "Save planned model" }).click();
    await page.getByText("Published values to reproduce").waitFor();
    await page.getByText(`contrast ${HIGH} vs Placebo, estimate printed as ${printedHigh}`).waitFor();
    await page.getByText(`contrast ${LOW} vs Placebo, estimate printed as 99.99`).waitFor();
    await page.getByRole("button", { name: "Submit for approval" }).click();
    await page.getByText("Awaiting approval").first().waitFor();
    await page.context().close();
    // the second biostatistician approves (a fresh sign-in: the signature needs no new round trip)
    await post(await sessionCookieFor(stack, TOMAS), planPath, [["intent", "approve"]]);
    expect(
      await one("SELECT status FROM plan_versions WHERE id = ?", [planPath.split("/").pop() ?? ""]),
    ).toBe("approved");
  }, 120_000);

  it("the rerun states each value reproduced or not, among the checks of the plan, and the failure awaits assessment", async () => {
    const page = await as("Priya Lindqvist");
    await page.goto(`${stack.appUrl}/studies/${studyId}/reruns`);
    const value = await page.locator("#rr-model option", { hasText: "primary ·" }).getAttribute("value");
    await page.getByLabel("Approved planned model").selectOption(value ?? "");
    await page.getByRole("button", { name: "Rerun" }).click();
    await page.getByRole("heading", { name: "Checks of the plan" }).waitFor({ timeout: 30_000 });
    rerunPath = new URL(page.url()).pathname;
    const card = page.getByRole("article", { name: "Reproduction of the published values" });
    await card.waitFor();
    await card.getByText("1 of 2 published values reproduced.").waitFor();
    await card
      .getByText(/half away from zero/)
      .first()
      .waitFor();
    const rows = card.getByRole("row");
    const high = rows.filter({ hasText: HIGH });
    const low = rows.filter({ hasText: LOW });
    expect(await high.getByText("Reproduced", { exact: true }).count()).toBe(1);
    expect(await high.getByText(`rounds to ${printedHigh.replace(/^-/, "−")}`, { exact: true }).count()).toBe(
      1,
    ); // a true minus sign on the page
    expect(await low.getByText("Not reproduced", { exact: true }).count()).toBe(1);
    expect(await low.getByText(/printed 99\.99$/).count()).toBe(1);
    // the check's own outcome, in word and shape, and counted among the checks
    expect(await card.locator("header").getByText("Not reproduced", { exact: true }).count()).toBe(1);
    await page
      .getByText(/· [1-9]\d* findings ·/)
      .first()
      .waitFor();
    // a failed reproduction is a finding to assess like any other
    const finding = page
      .locator("#findings article")
      .filter({ hasText: "Reproduction of the published values: Not reproduced" });
    await finding.getByText("Awaiting assessment").waitFor();
    await card.scrollIntoViewIfNeeded();
    await page.screenshot({
      path: "test-results/screenshots/reproduction-card.png",
      clip: (await card.boundingBox()) ?? undefined,
    });
    await screenshot(page, "reproduction-rerun");
    await page.context().close();
  }, 120_000);

  it("assessed and signed, the appendix and the API answer carry the check and its values", async () => {
    const rerunId = rerunPath.split("/").pop() ?? "";
    const rs = await testDb(stack).execute({
      sql: "SELECT id, check_key FROM findings WHERE rerun_id = ?",
      args: [rerunId],
    });
    expect(rs.rows.map((r) => r.check_key)).toContain("reproduction");
    const priya = await sessionCookieFor(stack, PRIYA);
    for (const r of rs.rows) {
      await post(priya, rerunPath, [
        ["intent", "assess"],
        ["findingId", String(r.id)],
        ["category", "data"],
        ["impact", "none"],
        ["action", "none"],
        [
          "rationale",
          "The report's 40 mg estimate was mistyped; the rerun agrees with the analysis datasets.",
        ],
      ]);
    }
    await post(await sessionCookieFor(stack, TOMAS), rerunPath, [["intent", "sign"]]);
    expect(await one("SELECT signed_at IS NOT NULL FROM reruns WHERE id = ?", [rerunId])).toBe("1");

    // the signed report shows the check with its values
    const page = await as("Tomas Berg");
    await page.goto(`${stack.appUrl}/studies/${studyId}/reports/${rerunId}`);
    const card = page.getByRole("article", { name: "Reproduction of the published values" });
    await card.getByText("1 of 2 published values reproduced.").waitFor();
    await screenshot(page, "reproduction-report");
    await page.context().close();

    const { buildAppendixContent } = await import("~/.server/appendix/build-content.server");
    const content = await buildAppendixContent(studyId, { kind: "rerun", rerunId });
    const paragraphs = content.sections
      .flatMap((s) => s.blocks)
      .flatMap((b) => (b.kind === "paragraph" ? [b.text] : []));
    expect(
      paragraphs.some((t) => t.startsWith("The plan listed 2 values printed in the clinical study report")),
    ).toBe(true);
    const tables = content.sections.flatMap((s) => s.blocks).filter((b) => b.kind === "table");
    const checks = tables.find((b) => b.key === `checks:${rerunId}`);
    expect(checks?.rows.find((r) => r[0] === "Reproduction of the published values")?.[3]).toBe(
      "Not reproduced (finding)",
    );
    const values = tables.find((b) => b.key === `reproduction:${rerunId}`);
    expect(values?.rows.map((r) => [r[1], r[3], r[4].split(":")[0]])).toEqual([
      [printedHigh, printedHigh, "Reproduced"],
      ["99.99", expect.stringMatching(/^-?\d+\.\d{2}$/), "Not reproduced"],
    ]);
    expect(values?.note).toMatch(/half away from zero/);
    const deviations = tables.find((b) => b.key === `deviations:${rerunId}`);
    expect(deviations?.rows.some((r) => r[0] === "Reproduction of the published values")).toBe(true);

    const { getStudyRerun } = await import("~/.server/api/reruns.server");
    const { RerunAnswer } = await import("~/.server/api/schemas");
    const person = {
      id: await personId(stack, PRIYA),
      displayName: "Priya Lindqvist",
      email: PRIYA,
      organisation: null,
    };
    const body = await getStudyRerun({ tokenId: "test", person }, studyId, rerunId);
    expect(body.checks.find((c) => c.key === "reproduction")).toMatchObject({
      outcome: "finding",
      statistic: "1 of 2 published values reproduced",
    });
    expect(body.reproduction?.values.map((v) => [v.published.value, v.outcome])).toEqual([
      [printedHigh, "reproduced"],
      ["99.99", "not_reproduced"],
    ]);
    // the answer is what the API schema and the served OpenAPI document say it is (strict objects)
    const { CAUTION } = await import("~/shared/caution");
    const answer = { caution: CAUTION, ...body };
    const checked = RerunAnswer.safeParse(answer);
    expect(checked.error?.issues ?? []).toEqual([]);
    const document = await (await fetch(`${stack.appUrl}/api/v1/openapi.json`)).json();
    const ajv = new Ajv2020({ strict: false, allErrors: true });
    addFormats(ajv);
    ajv.addSchema(document, "openapi.json");
    const validate = ajv.compile({
      $ref: "openapi.json#/paths/~1api~1v1~1studies~1{studyId}~1reruns~1{rerunId}/get/responses/200/content/application~1json/schema",
    });
    expect(validate(JSON.parse(JSON.stringify(answer))), JSON.stringify(validate.errors)).toBe(true);
  }, 120_000);
});
