/**
 * The medical writer exports the Word appendix in a real browser, of a signed rerun from
 * tests/support/published-rerun-http.ts: the one tests/browser/audit-flow.test.ts signed in the
 * shared stack when it ran first, or one made over HTTP when this file runs before it (vitest
 * runs the app project's files one at a time, but in its own order: files that failed last
 * time first).
 */
import { createHash } from "node:crypto";
import { readFileSync } from "node:fs";
import JSZip from "jszip";
import type { Browser } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot, signInAs } from "../support/browser";
import { ensurePublishedRerun } from "../support/published-rerun-http";
import { sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");
let browser: Browser;

beforeAll(async () => {
  await ensurePublishedRerun(stack);
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

describe("the Word appendix", () => {
  it("Helen Achter writes a narrative, exports the appendix of the signed rerun and downloads it", async () => {
    const context = await browser.newContext({
      viewport: { width: 1360, height: 900 },
      acceptDownloads: true,
    });
    const page = await context.newPage();
    await signInAs(page, stack.appUrl, "Helen Achter");
    await page.getByRole("link", { name: "QMT-301" }).click();
    await page
      .getByRole("navigation", { name: "Study sections" })
      .getByRole("link", { name: "Appendix" })
      .click();
    await page.getByRole("heading", { name: "Word appendix" }).waitFor();
    await page.getByRole("article", { name: "Preview of the appendix" }).waitFor();
    expect(await page.locator("[data-figure-key] img").count()).toBeGreaterThanOrEqual(5);
    expect(await page.locator('[data-table-key^="coefficients:"]').count()).toBe(1);

    const results = page.locator('section[data-section="results"]');
    await results
      .getByLabel(/Narrative for “Results”/)
      .fill("The adjusted difference from placebo favours both doses.");
    await results.getByRole("button", { name: "Save narrative" }).click();
    await results
      .getByRole("status")
      .filter({ hasText: /Saved as version \d+/ })
      .waitFor();
    await results.locator('[data-narrative="results"]').getByText("favours both doses").waitFor();

    await page.getByRole("button", { name: "Export the Word appendix" }).click();
    const status = page.getByRole("status").filter({ hasText: "SHA-256" });
    await status.waitFor({ timeout: 60_000 });
    const shown = /SHA-256 ([0-9a-f]{64})/.exec((await status.textContent()) ?? "")?.[1];
    expect(shown).toMatch(/^[0-9a-f]{64}$/);
    await page.getByRole("cell", { name: shown! }).first().waitFor();
    await screenshot(page, "appendix-exported");

    const [download] = await Promise.all([
      page.waitForEvent("download"),
      status.getByRole("link", { name: "Download the .docx" }).click(),
    ]);
    expect(download.suggestedFilename()).toMatch(/^QMT-301-appendix-\d{4}-\d{2}-\d{2}-[0-9a-f]{8}\.docx$/);
    const bytes = readFileSync((await download.path())!);
    expect(createHash("sha256").update(bytes).digest("hex")).toBe(shown);
    const xml = await (await JSZip.loadAsync(bytes)).file("word/document.xml")!.async("string");
    expect(xml).toContain("Results support, but do not replace, qualified statistical and medical review.");
    expect(xml).toContain("favours both doses");
    // the stored export is listed with its SHA-256 and downloads as the same bytes
    const [again] = await Promise.all([
      page.waitForEvent("download"),
      page
        .getByRole("row")
        .filter({ hasText: shown! })
        .first()
        .getByRole("link", { name: /Download/ })
        .click(),
    ]);
    expect(
      createHash("sha256")
        .update(readFileSync((await again.path())!))
        .digest("hex"),
    ).toBe(shown);
    await context.close();
  }, 180_000);

  it("serves the stored export to a sponsor reader of the published rerun, and refuses a data manager", async () => {
    const studyId = await studyIdByCode(stack, "QMT-301");
    const rs = await testDb(stack).execute({
      sql: "SELECT sha256, rerun_ids_json FROM appendices WHERE study_id = ? ORDER BY exported_at DESC LIMIT 1",
      args: [studyId],
    });
    const sha = String(rs.rows[0].sha256);
    const rerunId = (JSON.parse(String(rs.rows[0].rerun_ids_json)) as string[])[0];
    const url = `${stack.appUrl}/studies/${studyId}/appendix/download?rerun=${encodeURIComponent(rerunId)}`;
    const sponsor = await fetch(url, {
      headers: { Cookie: await sessionCookieFor(stack, "sam.quill@quillmoor.example") },
    });
    expect(sponsor.status).toBe(200);
    expect(sponsor.headers.get("Content-Type")).toContain("wordprocessingml");
    expect(
      createHash("sha256")
        .update(Buffer.from(await sponsor.arrayBuffer()))
        .digest("hex"),
    ).toBe(sha);
    const dataManager = await fetch(url, {
      headers: { Cookie: await sessionCookieFor(stack, "dana.okafor@plumbline.example") },
    });
    expect(dataManager.status).toBe(403);
    const anonymous = await fetch(url, { redirect: "manual" });
    expect(anonymous.status).toBe(302);
  });
});
