/**
 * What a medical writer's browser receives, in a real browser: Helen Achter signs in through the
 * fake identity provider, opens the results page of the demo study's signed rerun, draws every
 * figure and hovers over them. The page, every figure answer the browser fetched and every
 * hover detail carry no subject id of the rerun (the medical writer has no `dataset.rows`); a
 * biostatistician's browser, opening the same page, does receive them (so the check can fail).
 */
import type { Browser, BrowserContext, Response } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { drawAllFigures, hoverForSubject, launchBrowser, screenshot, signInAs } from "../support/browser";
import { ensurePublishedRerun } from "../support/published-rerun-http";
import { storedResultOnStack } from "../support/stored-result";

const stack = inject("stack");
let browser: Browser;
let studyId = "";
let rerunId = "";
let ids: string[] = [];

beforeAll(async () => {
  browser = await launchBrowser();
  ({ studyId, rerunId } = await ensurePublishedRerun(stack));
  const doc = JSON.parse(await storedResultOnStack(stack, rerunId)) as {
    result: { observations: { id: (string | null)[] } };
  };
  ids = doc.result.observations.id.filter((x): x is string => Boolean(x));
  if (ids.length < 100)
    throw new Error("The signed rerun names no subjects: the demo data should have subjid.");
}, 180_000);
afterAll(async () => {
  await browser?.close();
});

const namedIn = (text: string) => ids.filter((id) => text.includes(id)).slice(0, 3);

/** Opens the results page signed in as this person; collects every figure answer the browser (page or figure worker) receives. */
async function openResults(
  name: string,
): Promise<{ context: BrowserContext; html: string; figureBodies: Map<string, string> }> {
  const context = await browser.newContext({ viewport: { width: 1360, height: 900 } });
  const page = await context.newPage();
  const figureBodies = new Map<string, string>();
  const pending: Promise<void>[] = [];
  const keep = (res: Response) => {
    if (!/\/figures\/[a-z_]+/.test(new URL(res.url()).pathname)) return;
    pending.push(
      res.text().then(
        (t) => void figureBodies.set(res.url(), t),
        () => undefined,
      ),
    );
  };
  context.on("response", keep);
  await signInAs(page, stack.appUrl, name);
  await page.goto(`${stack.appUrl}/studies/${studyId}/reruns/${rerunId}`);
  await page.getByRole("heading", { name: "Checks of the plan" }).waitFor();
  const states = await drawAllFigures(page);
  expect(states.every((s) => s === "ready")).toBe(true);
  await Promise.all(pending);
  if (figureBodies.size === 0) {
    // Responses from the figure worker are not reported in every Chromium: fetch them as the browser.
    const urls = await page
      .locator("[data-figure]")
      .evaluateAll((els) =>
        [...new Set(els.map((el) => (el as HTMLElement).dataset.figureUrl ?? ""))].filter(Boolean),
      );
    for (const u of urls) figureBodies.set(u, await page.evaluate(async (x) => (await fetch(x)).text(), u));
  }
  const html = await page.content();
  const hover = await hoverForSubject(page, "influence");
  await screenshot(page, `results-${name.toLowerCase().replace(/\s+/g, "-")}`);
  await page.close();
  return { context, html: `${html}\n${hover ?? ""}`, figureBodies };
}

describe("subject ids in a medical writer's browser", () => {
  it("a biostatistician's browser receives subject ids on the same page (the check can fail)", async () => {
    const { context, html, figureBodies } = await openResults("Priya Lindqvist");
    expect(namedIn(html).length).toBeGreaterThan(0);
    expect([...figureBodies.values()].filter((b) => namedIn(b).length > 0).length).toBeGreaterThanOrEqual(3);
    await context.close();
  }, 120_000);

  it("Helen Achter's results page, figure answers and hover details name no subject", async () => {
    const { context, html, figureBodies } = await openResults("Helen Achter");
    expect(figureBodies.size).toBeGreaterThanOrEqual(5);
    expect(namedIn(html)).toEqual([]);
    expect(html).toContain("ranked");
    for (const [url, body] of figureBodies) expect(namedIn(body), url).toEqual([]);
    await context.close();
  }, 120_000);
});
