// Throwaway walk-through of this round's work against the running demo (not committed).
import { launchBrowser, signInAs, screenshot } from "./tests/support/browser";
const APP = "http://localhost:5180";
const shot = (p: any, n: string) => p.screenshot({ path: `/tmp/tour/${n}.png`, fullPage: true });
const browser = await launchBrowser();
async function as(name: string) {
  const ctx = await browser.newContext({ viewport: { width: 1360, height: 900 } });
  const page = await ctx.newPage();
  await signInAs(page, APP, name);
  return page;
}
// Data manager: upload the CDISC ADSL transport file, see labels and the screen.
{
  const page = await as("Dana Okafor");
  await page.getByRole("link", { name: "QMT-301" }).first().click();
  await page.getByRole("link", { name: "Datasets" }).first().click();
  await shot(page, "01-datasets");
  await page.getByLabel(/Dataset name/i).fill("adsl");
  await page.locator('input[type="file"]').setInputFiles(process.argv[2]);
  await page.getByRole("button", { name: /upload/i }).click();
  await page.waitForURL(/datasets\/[^/]+$/, { timeout: 60_000 });
  await page.waitForTimeout(1500);
  await shot(page, "02-xpt-version");
  console.log("version page", page.url());
}
// Medical writer: results of the demo's signed rerun, no subject ids.
{
  const page = await as("Helen Achter");
  await page.getByRole("link", { name: "QMT-301" }).first().click();
  await shot(page, "03-writer-study");
  const reruns = page.getByRole("link", { name: "Reruns" });
  if (await reruns.count()) { await reruns.first().click(); await shot(page, "04-writer-reruns");
    const first = page.locator('a[href*="/reruns/"]').first();
    if (await first.count()) { await first.click(); await page.waitForTimeout(4000); await shot(page, "05-writer-results"); const html = await page.content(); console.log("writer page names a subject:", /QMT301-\d{4}/.test(html)); }
  }
}
// Administrator: audit page with the keyed chain head.
{
  const page = await as("Morgan Reyes");
  await page.goto(`${APP}/admin/audit`);
  await shot(page, "06-audit");
}
await browser.close();
