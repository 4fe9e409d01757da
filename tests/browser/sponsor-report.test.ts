/**
 * The sponsor's view in a real browser: Sam Quill of Quillmoor Therapeutics signs in through
 * the fake OpenID Connect provider and reads the published report of the demo study; the
 * results pages behind it are closed to him, and a reader of another organisation sees no
 * study at all.
 *
 * The published rerun comes from tests/support/published-rerun-http.ts: the one
 * tests/browser/audit-flow.test.ts signed in the shared stack when it ran first, or one it makes
 * over HTTP when it runs before it or alone (the app project runs its files one at a time, in
 * vitest's order).
 */
import type { Browser, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot, signInAsSponsor } from "../support/browser";
import { ensurePublishedRerun } from "../support/published-rerun-http";

const stack = inject("stack");
let browser: Browser;
let studyId = "";
let published = "";

beforeAll(async () => {
  browser = await launchBrowser();
  ({ studyId, rerunId: published } = await ensurePublishedRerun(stack));
}, 120_000);
afterAll(async () => {
  await browser?.close();
});

async function sponsor(name: string): Promise<Page> {
  const context = await browser.newContext({ viewport: { width: 1360, height: 900 } });
  const page = await context.newPage();
  await signInAsSponsor(page, stack.appUrl, name);
  return page;
}

describe("a sponsor reads the published report", () => {
  it("the fake provider lets a person choose which sponsor account signs in", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    await page.goto(`${stack.appUrl}/sign-in`);
    await screenshot(page, "sign-in-with-sponsor-button");
    await page.getByRole("button", { name: "Sponsor sign-in" }).click();
    await page.getByRole("button", { name: "Continue as Sam Quill" }).waitFor();
    expect(await page.getByRole("button", { name: /Continue as/ }).allTextContents()).toHaveLength(2);
    await screenshot(page, "oidc-fake-picker");
    await page.close();
  });

  it("Sam Quill signs in through OpenID Connect and sees only the published report", async () => {
    const page = await sponsor("Sam Quill");
    await page.getByRole("link", { name: "QMT-301" }).click();
    const nav = page.getByRole("navigation", { name: "Study sections" });
    await nav.waitFor();
    expect(await nav.getByRole("link").allTextContents()).toEqual(["Overview", "Reports"]);
    await nav.getByRole("link", { name: "Reports" }).click();
    await page.getByRole("heading", { name: "Reports" }).waitFor();
    await screenshot(page, "sponsor-report-list");
    await page.locator(`a[href="/studies/${studyId}/reports/${published}"]`).click();
    await page.getByText("Signed and published").waitFor();
    await page.getByRole("heading", { name: "Sensitivity comparison" }).waitFor();
    const html = await page.content();
    expect(html).not.toMatch(/QMT301-/);
    expect(html).toContain("subject ranked 1");
    expect(
      await page
        .getByText("Results support, but do not replace, qualified statistical and medical review.")
        .count(),
    ).toBeGreaterThan(0);
    for (const forbidden of ["Rerun again with the same inputs", "Sign this rerun", "Upload", "Run it"]) {
      expect(await page.getByRole("button", { name: forbidden }).count()).toBe(0);
    }
    await screenshot(page, "sponsor-report");

    for (const path of [
      `/studies/${studyId}/reruns/${published}`,
      `/studies/${studyId}/datasets`,
      `/studies/${studyId}/plans`,
    ]) {
      const res = await page.goto(`${stack.appUrl}${path}`);
      expect(`${path} ${res?.status()}`).toBe(`${path} 403`);
    }
    await screenshot(page, "sponsor-refused-results-page");
    await page.context().close();
  });

  it("a reader of an organisation the study is not shared with sees no study", async () => {
    const page = await sponsor("Ines Varga");
    expect(await page.getByRole("link", { name: "QMT-301" }).count()).toBe(0);
    await page.getByText("No study is shared with Harrowgate Biologics yet.").waitFor();
    await screenshot(page, "sponsor-other-organisation-home");
    const res = await page.goto(`${stack.appUrl}/studies/${studyId}/reports/${published}`);
    expect(res?.status()).toBe(403);
    await page.context().close();
  });
});
