/**
 * The data manager's whole job in a real browser: a repeated upload is refused, a Dataset-JSON
 * file is screened (a rationale for the subject code, the birth date removed into a derived
 * version) and locked, then a changed demo CSV becomes adeff version 2 with its summary of
 * changes against the locked version 1, and is locked in turn.
 */
import { mkdtempSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, afterEach, beforeAll, describe, expect, inject, it } from "vitest";
import { demoDatasetCsv, generateDemoDataset } from "~/.server/demo/demo-dataset";
import { launchBrowser, screenshot, signInAs } from "../support/browser";
import { studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");
let browser: Browser;
let page: Page;
let studyId = "";
const dir = mkdtempSync(path.join(os.tmpdir(), "plumbline-browser-"));

/** The demo CSV with subject 5 withdrawn, subject 10's week-12 value corrected and one subject added. */
function changedDemoCsv(): string {
  const lines = demoDatasetCsv().trimEnd().split("\n");
  const out = lines.filter((l) => !l.startsWith("QMT301-0005,"));
  const i = out.findIndex((l) => l.startsWith("QMT301-0010,"));
  const cells = out[i].split(",");
  cells[7] = "55.5";
  out[i] = cells.join(",");
  out.push(lines[1].replace("QMT301-0001", "QMT301-0451"));
  return out.join("\n") + "\n";
}

/** A subject-level Dataset-JSON v1.1 file made from the demo subjects, with a birth date column. */
function demoDatasetJson(): string {
  const { rows } = generateDemoDataset();
  const subset = rows.slice(0, 120);
  return JSON.stringify({
    datasetJSONCreationDateTime: "2026-11-30T09:00:00",
    datasetJSONVersion: "1.1.0",
    itemGroupOID: "IG.ADSL",
    records: subset.length,
    name: "ADSL",
    label: "Subject-level analysis dataset",
    columns: [
      {
        itemOID: "IT.ADSL.USUBJID",
        name: "USUBJID",
        label: "Unique subject identifier",
        dataType: "string",
        keySequence: 1,
      },
      { itemOID: "IT.ADSL.ARM", name: "ARM", label: "Randomised arm", dataType: "string" },
      { itemOID: "IT.ADSL.AGE", name: "AGE", label: "Age at randomisation", dataType: "integer" },
      { itemOID: "IT.ADSL.BRTHDT", name: "BRTHDT", label: "Date of birth", dataType: "date" },
    ],
    rows: subset.map((r, k) => [
      r.subjid,
      r.arm,
      r.age === "" ? null : Number(r.age),
      `19${50 + (k % 40)}-0${1 + (k % 9)}-1${k % 10}`,
    ]),
  });
}

beforeAll(async () => {
  studyId = await studyIdByCode(stack, "QMT-301");
  writeFileSync(path.join(dir, "adeff.csv"), demoDatasetCsv());
  writeFileSync(path.join(dir, "adsl.json"), demoDatasetJson());
  writeFileSync(path.join(dir, "adeff-corrected.csv"), changedDemoCsv());
  browser = await launchBrowser();
  const context = await browser.newContext({ viewport: { width: 1440, height: 900 } });
  page = await context.newPage();
  page.setDefaultTimeout(10_000);
  page.on("pageerror", (e) => console.error(`page error: ${e.message}`));
  page.on("console", (m) => m.type() === "error" && console.error(`console: ${m.text()}`));
  await signInAs(page, stack.appUrl, "Dana Okafor");
});
afterEach(async (ctx) => {
  if (ctx.task.result?.state === "fail")
    await screenshot(page, `datasets-failed-${ctx.task.name.slice(0, 30).replace(/\W+/g, "-")}`);
});
afterAll(async () => {
  await browser?.close();
});

const datasetsUrl = () => `${stack.appUrl}/studies/${studyId}/datasets`;

async function uploadFile(file: string, datasetName?: string) {
  await page.goto(datasetsUrl());
  await page.getByLabel("File").setInputFiles(path.join(dir, file));
  if (datasetName) await page.getByLabel("Dataset name").fill(datasetName);
  await page.getByRole("button", { name: "Upload and check" }).click();
}

async function waitForVersionPage(title: string) {
  try {
    await page.getByRole("heading", { name: title }).waitFor({ timeout: 20_000 });
  } catch (e) {
    await screenshot(page, `datasets-failed-${title.replace(/\W+/g, "-")}`);
    const alerts = await page.getByRole("alert").allTextContents();
    throw new Error(
      `"${title}" did not appear (at ${page.url()}; alerts: ${alerts.join(" | ")}): ${(e as Error).message}`,
    );
  }
}

describe("the data manager's datasets", () => {
  it("sees the demo dataset locked, and a repeated upload is refused with nothing stored", async () => {
    await page.goto(datasetsUrl());
    await expect.poll(() => page.getByRole("cell", { name: "Locked" }).count()).toBeGreaterThan(0);
    await page.getByText("at most 200.0 MB").waitFor();
    await uploadFile("adeff.csv");
    const alert = page.getByRole("alert").filter({ hasText: "Nothing was stored" });
    await alert.waitFor();
    expect(await alert.textContent()).toContain("byte for byte the same as version 1 of adeff (locked)");
    await screenshot(page, "datasets-upload-refused");
  });

  it("uploads a Dataset-JSON file, resolves the screen and locks the derived version", async () => {
    await uploadFile("adsl.json");
    await waitForVersionPage("adsl · version 1");
    await page.getByText("Unique identifying number or code").waitFor();
    // Flagged columns are masked in the preview until resolved, like the screen's examples.
    const preview = page.getByRole("table", { name: "Preview rows" });
    await page.getByRole("columnheader", { name: "BRTHDT (masked)" }).waitFor();
    await preview.getByRole("cell", { name: "####-##-##" }).first().waitFor();
    expect(await preview.getByRole("cell", { name: /^19\d\d-\d\d-\d\d$/ }).count()).toBe(0);
    expect(await preview.getByRole("cell", { name: "QMT301-0001" }).count()).toBe(0);
    await screenshot(page, "datasets-json-screen");
    const usubjid = page.locator("li", { hasText: "USUBJID" }).filter({ hasText: "Unique identifying" });
    await usubjid
      .getByLabel("Why it is not an identifier")
      .fill("Pseudonymous subject code assigned by the study");
    await usubjid.getByRole("button", { name: "Record: not an identifier" }).click();
    await page.getByText("“Pseudonymous subject code assigned by the study”").waitFor();
    await preview.getByRole("cell", { name: "QMT301-0001" }).waitFor();
    await page
      .locator("li", { hasText: "BRTHDT" })
      .first()
      .getByRole("button", { name: "Remove column BRTHDT" })
      .click();
    await waitForVersionPage("adsl · version 2");
    await page.getByText("Derived from version 1 by removing “BRTHDT”").waitFor();
    await page.getByRole("button", { name: "Lock version 2" }).click();
    await page.getByRole("button", { name: "Lock version 2" }).waitFor({ state: "detached" });
    await page
      .getByRole("definition")
      .filter({ hasText: /^Locked$/ })
      .waitFor();
    await screenshot(page, "datasets-json-locked");
  });

  it("purges the superseded, never-locked version 1 only after the confirmation box is ticked", async () => {
    const rs = await testDb(stack).execute(
      "SELECT v.id FROM dataset_versions v JOIN datasets d ON d.id = v.dataset_id WHERE d.name = 'adsl' AND v.version = 1",
    );
    await page.goto(`${datasetsUrl()}/${String(rs.rows[0].id)}`);
    const purge = page.getByRole("region", { name: "Purge version 1" });
    await purge.getByRole("button", { name: "Purge version 1" }).click();
    await purge
      .getByRole("alert")
      .filter({ hasText: "Confirm that version 1 of adsl and its stored file are to be removed for good" })
      .waitFor();
    await purge.getByLabel("I understand that the file of version 1 is removed for good.").check();
    await purge.getByRole("button", { name: "Purge version 1" }).click();
    await page.getByText(/Its stored file and parsed columns were purged by Dana Okafor/).waitFor();
    await page.getByText("The rows of this version were purged.").waitFor();
    await screenshot(page, "datasets-version-purged");
  });

  it("uploads a changed demo CSV and sees what changed against the locked version, then locks it", async () => {
    await uploadFile("adeff-corrected.csv", "adeff");
    await waitForVersionPage("adeff · version 2");
    const changes = page.getByRole("region", { name: "Changes in version 2 against locked version 1" });
    await changes.waitFor();
    const row = (label: string) => changes.getByRole("row", { name: new RegExp(`^${label}`) });
    expect(await row("Rows added").textContent()).toContain("QMT301-0451");
    expect(await row("Rows removed").textContent()).toContain("QMT301-0005");
    expect(await row("Rows changed").textContent()).toContain("QMT301-0010 (wk12)");
    await page.getByRole("cell", { name: "QMT301-0002" }).first().waitFor();
    const ageHeader = page.getByRole("columnheader", { name: "age", exact: true });
    await ageHeader.getByRole("button").click();
    await expect.poll(() => ageHeader.getAttribute("aria-sort")).toBe("ascending");
    // Ascending age: the youngest demo subjects are 18 (the generator's lower bound).
    await expect
      .poll(() =>
        page
          .getByRole("table", { name: "Preview rows" })
          .getByRole("row")
          .nth(1)
          .getByRole("cell")
          .nth(6)
          .textContent(),
      )
      .toBe("18");
    // The rationale recorded on version 1 is carried forward: same column, same category.
    const subjid = page.locator("li", { hasText: "subjid" }).filter({ hasText: "Unique identifying" });
    await subjid.getByText(/Dana Okafor, .* carried forward from version 1/).waitFor();
    await page.getByRole("button", { name: "Lock version 2" }).click();
    await page.getByRole("button", { name: "Lock version 2" }).waitFor({ state: "detached" });
    await page
      .getByRole("definition")
      .filter({ hasText: /^Locked$/ })
      .waitFor();
    await screenshot(page, "datasets-adeff-v2-locked");
    await page.goto(datasetsUrl());
    await page.getByText("vs v1: +1 −1 ~1 rows").waitFor();
    await screenshot(page, "datasets-list");
  });
});
