/**
 * A full sign-in in a real browser for each demo person (staff through the fake SAML identity
 * provider, the sponsor reader through the fake OpenID Connect provider), checking that each sees only the navigation their role may use.
 */
import type { Browser } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { launchBrowser, screenshot, signInAs, signInAsSponsor } from "../support/browser";

const stack = inject("stack");
let browser: Browser;

beforeAll(async () => {
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

const STUDY_SECTIONS = [
  "Overview",
  "Datasets",
  "Analysis plans",
  "Reruns",
  "Deviation log",
  "Appendix",
  "Reports",
];

const CASES: { who: string; name: string; admin: boolean; sections: string[] | null; sponsor?: true }[] = [
  { who: "administrator", name: "Morgan Reyes", admin: true, sections: null },
  { who: "data manager", name: "Dana Okafor", admin: false, sections: ["Overview", "Datasets"] },
  {
    who: "biostatistician",
    name: "Priya Lindqvist",
    admin: false,
    sections: ["Overview", "Datasets", "Analysis plans", "Reruns", "Deviation log", "Reports"],
  },
  {
    who: "medical writer",
    name: "Helen Achter",
    admin: false,
    sections: ["Overview", "Analysis plans", "Reruns", "Deviation log", "Appendix", "Reports"],
  },
  {
    who: "sponsor reader",
    name: "Sam Quill",
    admin: false,
    sections: ["Overview", "Reports"],
    sponsor: true,
  },
];

describe("signing in through the fake identity provider", () => {
  for (const c of CASES) {
    it(`the ${c.who} signs in and sees only their navigation`, async () => {
      const context = await browser.newContext({ viewport: { width: 1280, height: 800 } });
      const page = await context.newPage();
      await (c.sponsor ? signInAsSponsor : signInAs)(page, stack.appUrl, c.name);
      await expect.poll(() => page.getByText(c.name, { exact: true }).count()).toBeGreaterThan(0);
      const main = page.getByRole("navigation", { name: "Main" });
      for (const adminLink of ["Manage studies", "People and roles", "Audit trail"]) {
        expect(await main.getByRole("link", { name: adminLink }).count()).toBe(c.admin ? 1 : 0);
      }
      const slug = c.who.replace(/ /g, "-");
      await screenshot(page, `study-list-${slug}`);
      if (c.sections) {
        await page.getByRole("link", { name: "QMT-301" }).click();
        const nav = page.getByRole("navigation", { name: "Study sections" });
        await nav.waitFor();
        const shown = await nav.getByRole("link").allTextContents();
        expect(shown).toEqual(STUDY_SECTIONS.filter((s) => c.sections!.includes(s)));
        await screenshot(page, `workspace-${slug}`);
      } else {
        expect(await page.getByRole("link", { name: "QMT-301" }).count()).toBe(0);
        await page.getByRole("link", { name: "People and roles" }).click();
        await page.getByRole("heading", { name: "People and roles" }).waitFor();
        await screenshot(page, "people-and-roles");
        await page.getByRole("link", { name: "Audit trail" }).click();
        await page.getByText("Chain verified").waitFor();
        await screenshot(page, "audit-trail");
      }
      await page.getByRole("button", { name: "Sign out" }).click();
      await page.waitForURL(
        (url) =>
          url.pathname.startsWith("/sign-in") ||
          url.pathname.startsWith("/signed-out") ||
          url.origin !== new URL(stack.appUrl).origin,
      );
      await context.close();
    });
  }

  it("the sign-in page looks finished", async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 800 } });
    await page.goto(`${stack.appUrl}/sign-in`);
    await expect.poll(() => page.getByText("Results support, but do not replace").count()).toBe(1);
    await screenshot(page, "sign-in");
    await page.close();
  });
});
