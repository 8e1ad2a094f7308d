import { expect, test } from "@playwright/test";
import { signInAs, unique } from "./support";

// The developer page's API token section: create a token, see its secret once, revoke it.
const widths = [
  { name: "desktop", width: 1280, height: 800 },
  { name: "phone", width: 390, height: 844 },
];

for (const size of widths) {
  test(`API tokens on the developer page (${size.width} px)`, async ({ page }) => {
    await page.setViewportSize({ width: size.width, height: size.height });
    await signInAs(page, "owner@corvid.example");
    await page.goto("/o/corvid/developer");
    const section = page.locator('section[aria-labelledby="api-tokens-heading"]');
    const name = unique("Plant historian");
    await section.getByLabel("Name").fill(name);
    await section.getByLabel("Scope").selectOption("write");
    await section.getByRole("button", { name: "Create token" }).click();
    const secret = section.getByTestId("new-token-secret");
    await expect(secret).toHaveText(/^fbk_[A-Za-z0-9_-]{43}$/);
    const row = section.getByTestId("api-token-row").filter({ hasText: name });
    await expect(row).toContainText("Read and write");
    await expect(row).toContainText("Active");
    // The whole page, including the device API examples below the section, fits the width.
    const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
    expect(overflow).toBeLessThanOrEqual(0);
    // Clip the section out of a full-page shot, so the phone's sticky header does not cover it.
    await page.evaluate(() => window.scrollTo(0, 0));
    const box = (await section.boundingBox())!;
    await page.screenshot({ path: `data/screenshots/tokens-${size.name}.png`, fullPage: true, clip: { x: 0, y: Math.max(0, box.y - 16), width: size.width, height: box.height + 32 } });

    page.once("dialog", (dialog) => dialog.accept());
    await row.getByRole("button", { name: `Revoke ${name}` }).click();
    await expect(row).toContainText("Revoked");
    await expect(section.getByTestId("new-token-secret")).toHaveCount(0);
  });
}
