import { expect, test } from "@playwright/test";
import { signInAs } from "./support";

// Screenshots of the main screens at desktop and phone widths, checked for horizontal overflow.
const widths = [
  { name: "desktop", width: 1280, height: 800 },
  { name: "phone", width: 390, height: 844 },
];

async function expectNoHorizontalOverflow(page: import("@playwright/test").Page) {
  const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
  expect(overflow).toBeLessThanOrEqual(0);
}

for (const size of widths) {
  test.describe(`${size.name} (${size.width} px)`, () => {
    test.use({ viewport: { width: size.width, height: size.height } });

    test("landing and sign-in", async ({ page }) => {
      await page.goto("/");
      await expect(page.getByRole("heading", { level: 1 })).toBeVisible();
      await expectNoHorizontalOverflow(page);
      await page.screenshot({ path: `data/screenshots/landing-${size.name}.png`, fullPage: true });
      await page.goto("/sign-in");
      await expectNoHorizontalOverflow(page);
      await page.screenshot({ path: `data/screenshots/sign-in-${size.name}.png`, fullPage: true });
    });

    test("organisation home and team", async ({ page }) => {
      await signInAs(page, "owner@corvid.example");
      await page.goto("/o/corvid");
      await expect(page.getByRole("heading", { name: "Corvid Thermal Machines" })).toBeVisible();
      await expectNoHorizontalOverflow(page);
      await page.screenshot({ path: `data/screenshots/org-home-${size.name}.png`, fullPage: true });
      await page.goto("/o/corvid/team");
      await expect(page.getByRole("heading", { name: "Members" })).toBeVisible();
      await expectNoHorizontalOverflow(page);
      await page.screenshot({ path: `data/screenshots/team-${size.name}.png`, fullPage: true });
    });
  });
}
