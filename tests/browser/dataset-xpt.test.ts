/**
 * A data manager uploads CDISC's public example files (tests/fixtures/cdisc/, see its
 * README for the source) in a real browser and sees the column labels the file carries in the
 * preview's headings.
 */
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, afterEach, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot, signInAs } from "../support/browser";
import { studyIdByCode } from "../support/sessions";

const stack = inject("stack");
const CDISC = path.join(import.meta.dirname, "..", "fixtures", "cdisc");
let browser: Browser;
let page: Page;
let studyId = "";

beforeAll(async () => {
  studyId = await studyIdByCode(stack, "QMT-301");
  browser = await launchBrowser();
  const context = await browser.newContext({ viewport: { width: 1440, height: 900 } });
  page = await context.newPage();
  page.setDefaultTimeout(10_000);
  page.on("pageerror", (e) => console.error(`page error: ${e.message}`));
  await signInAs(page, stack.appUrl, "Dana Okafor");
});
afterEach(async (ctx) => {
  if (ctx.task.result?.state === "fail")
    await screenshot(page, `dataset-xpt-failed-${ctx.task.name.slice(0, 30).replace(/\W+/g, "-")}`);
});
afterAll(async () => {
  await browser?.close();
});

describe("transport files in the browser", () => {
  it("the file picker offers .xpt, and an uploaded adsl.xpt shows its column labels in the preview", async () => {
    await page.goto(`${stack.appUrl}/studies/${studyId}/datasets`);
    const picker = page.getByLabel("File");
    const accept = (await picker.getAttribute("accept")) ?? "";
    for (const ext of [".xpt", ".json", ".ndjson", ".csv"]) expect(accept.split(",")).toContain(ext);
    await picker.setInputFiles(path.join(CDISC, "adsl.xpt"));
    await page.getByLabel("Dataset name").fill("adslpilot");
    await page.getByRole("button", { name: "Upload and check" }).click();
    await page.getByRole("heading", { name: "adslpilot · version 1" }).waitFor({ timeout: 30_000 });
    const headings = page.getByRole("columnheader");
    await headings.filter({ hasText: "Unique Subject Identifier" }).first().waitFor();
    const texts = await headings.allTextContents();
    expect(texts.some((t) => t.includes("USUBJID") && t.includes("Unique Subject Identifier"))).toBe(true);
    expect(texts.some((t) => t.includes("AGE") && t.includes("Age"))).toBe(true);
    await page.getByText("XPORT").first().waitFor();
    await screenshot(page, "dataset-xpt-preview-labels");
  });

  it("an empty file is named as empty (not 'choose a file')", async () => {
    await page.goto(`${stack.appUrl}/studies/${studyId}/datasets`);
    await page
      .getByLabel("File")
      .setInputFiles({ name: "empty.csv", mimeType: "text/csv", buffer: Buffer.alloc(0) });
    await page.getByRole("button", { name: "Upload and check" }).click();
    const alert = page.getByRole("alert").filter({ hasText: "Nothing was stored" });
    await alert.waitFor();
    expect(await alert.textContent()).toContain("The file empty.csv is empty.");
  });

  it("every other CDISC example loads through the form with its labels and key; the v1.0 file gets its one message", async () => {
    const files: { file: string; name: string; label: string; key: string }[] = [
      { file: "adsl.json", name: "cdadsljson", label: "Subject Reference Start Date/Time", key: "USUBJID" },
      { file: "adsl.ndjson", name: "cdadslnd", label: "Date of First Exposure to Treatment", key: "USUBJID" },
      { file: "dm.json", name: "cddm", label: "Date/Time of Birth", key: "STUDYID, USUBJID" },
      {
        file: "ae.json",
        name: "cdae",
        label: "Start Date/Time of Adverse Event",
        key: "STUDYID, USUBJID, AEDECOD, AESTDTC, AELNKID",
      },
      { file: "adae.xpt", name: "cdadae", label: "Analysis Start Date", key: "USUBJID, AESEQ" },
      { file: "dm.xpt", name: "cddmxpt", label: "Date/Time of Birth", key: "USUBJID" },
    ];
    for (const f of files) {
      await page.goto(`${stack.appUrl}/studies/${studyId}/datasets`);
      await page.getByLabel("File").setInputFiles(path.join(CDISC, f.file));
      await page.getByLabel("Dataset name").fill(f.name);
      await page.getByRole("button", { name: "Upload and check" }).click();
      await page.getByRole("heading", { name: `${f.name} · version 1` }).waitFor({ timeout: 30_000 });
      await page.getByRole("columnheader").filter({ hasText: f.label }).first().waitFor();
      const key = page.locator("dt", { hasText: /^Key$/ }).locator("xpath=following-sibling::dd");
      expect((await key.textContent())?.trim(), f.file).toBe(f.key);
    }
    await page.goto(`${stack.appUrl}/studies/${studyId}/datasets`);
    await page.getByLabel("File").setInputFiles(path.join(CDISC, "v1.0", "adsl.json"));
    await page.getByLabel("Dataset name").fill("cdv10");
    await page.getByRole("button", { name: "Upload and check" }).click();
    const alert = page.getByRole("alert").filter({ hasText: "Nothing was stored" });
    await alert.waitFor();
    expect(await alert.locator("li").allTextContents()).toEqual([
      "adsl.json is Dataset-JSON version 1.0.0; Plumbline reads version 1.1, whose structure differs. Convert the file to Dataset-JSON v1.1 (or export the dataset again as v1.1) and upload that.",
    ]);
    await screenshot(page, "dataset-cdisc-v1.0-refused");
  });
});
