/**
 * Debian's chromium driven by playwright-core (never a downloaded browser build), with the
 * flags this closed network needs so Chromium does not try to reach outside services.
 */
import { mkdirSync } from "node:fs";
import path from "node:path";
import { chromium, type Browser, type Page } from "playwright-core";

export const CHROMIUM = process.env.CHROMIUM_PATH ?? "/usr/bin/chromium";

export function launchBrowser(): Promise<Browser> {
  return chromium.launch({
    executablePath: CHROMIUM,
    headless: true,
    args: [
      "--no-sandbox",
      "--disable-gpu",
      "--disable-quic",
      "--no-first-run",
      "--disable-background-networking",
      "--disable-component-update",
      "--disable-sync",
    ],
  });
}

/** Screenshots land in test-results/screenshots (ignored by git) for people to look at. */
export async function screenshot(page: Page, name: string): Promise<string> {
  const dir = path.resolve("test-results/screenshots");
  mkdirSync(dir, { recursive: true });
  const file = path.join(dir, `${name}.png`);
  await page.screenshot({ path: file, fullPage: true });
  return file;
}

/** Signs in through the real SAML round trip: our sign-in page, the fake IdP's picker, back. */
export async function signInAs(page: Page, appUrl: string, displayName: string): Promise<void> {
  await page.goto(`${appUrl}/sign-in`);
  await page.getByRole("button", { name: /sign in with single sign-on/i }).click();
  await page.getByRole("button", { name: `Sign in as ${displayName}` }).click();
  await page.waitForURL((url) => url.origin === new URL(appUrl).origin && url.pathname === "/", {
    timeout: 20_000,
  });
}

/** Signs a sponsor reader in through the OpenID Connect round trip: "Sponsor sign-in", the fake provider's picker, back. */
export async function signInAsSponsor(page: Page, appUrl: string, displayName: string): Promise<void> {
  await page.goto(`${appUrl}/sign-in`);
  await page.getByRole("button", { name: "Sponsor sign-in" }).click();
  await page.getByRole("button", { name: `Continue as ${displayName}` }).click();
  await page.waitForURL((url) => url.origin === new URL(appUrl).origin && url.pathname === "/", {
    timeout: 20_000,
  });
}

/**
 * Scrolls every diagnostic figure of a results page into view in turn, as a reader would, and
 * waits until each is drawn; returns the states in page order ("ready" or "error").
 */
export async function drawAllFigures(page: Page): Promise<string[]> {
  const frames = page.locator("[data-figure]");
  const count = await frames.count();
  for (let i = 0; i < count; i++) {
    await frames.nth(i).scrollIntoViewIfNeeded();
    await page.waitForFunction(
      (k) => document.querySelectorAll<HTMLElement>("[data-figure]")[k]?.dataset.state !== "loading",
      i,
      { timeout: 20_000 },
    );
  }
  return frames.evaluateAll((els) => els.map((el) => (el as HTMLElement).dataset.state ?? "?"));
}

/**
 * Moves the pointer over a drawn figure along a grid until the hover table shows a subject;
 * returns its text, or null when no point was met.
 */
export async function hoverForSubject(page: Page, figure: string): Promise<string | null> {
  const frame = page.locator(`[data-figure="${figure}"]`).first();
  await frame.scrollIntoViewIfNeeded();
  const box = await frame.locator("canvas").boundingBox();
  if (!box) return null;
  for (let row = 1; row < 24; row++) {
    for (let col = 1; col < 48; col++) {
      await page.mouse.move(box.x + (box.width * col) / 48, box.y + (box.height * row) / 24);
      const text = await page.evaluate(() => {
        const tip = document.getElementById("vg-tooltip-element");
        return tip?.classList.contains("visible") && /Subject/.test(tip.textContent ?? "")
          ? (tip.innerText ?? null)
          : null;
      });
      if (text) return text;
    }
  }
  return null;
}
