// The machines table and a machine page in a real browser, at desktop and phone widths,
// with screenshots kept under data/screenshots/ for a person to look at.
import { expect, test } from "@playwright/test";
import { signInAs } from "./support";

const SHOTS = "data/screenshots";

test("the machines table lists the demo fleet, sorts and filters through the URL", async ({ page }) => {
  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, "owner@corvid.example");
  await page.goto("/o/corvid/machines?pageSize=50");
  await expect(page.getByText("48 machines")).toBeVisible();
  await expect(page.getByRole("link", { name: /^CTM-EX-/ })).toHaveCount(48);
  await page.screenshot({ path: `${SHOTS}/machines-1280.png`, fullPage: false });

  await page.getByRole("button", { name: /Serial/ }).click();
  await expect(page).toHaveURL(/sort=serial/);
  await expect(page).toHaveURL(/dir=desc/);
  await page.getByLabel("Customer").selectOption({ label: "Mirabel Tubing" });
  await page.getByRole("button", { name: "Apply" }).click();
  await expect(page.getByText("12 machines match")).toBeVisible();

  await page.setViewportSize({ width: 390, height: 844 });
  await page.goto("/o/corvid/machines");
  await page.screenshot({ path: `${SHOTS}/machines-390.png`, fullPage: false });
});

test("a machine page shows its loops, gains and trends", async ({ page }) => {
  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, "engineer@corvid.example");
  await page.goto("/o/corvid/machines?sort=serial&dir=asc");
  await page.getByRole("link", { name: /^CTM-EX-/ }).first().click();
  await expect(page.getByRole("heading", { name: "Loops" })).toBeVisible();
  await expect(page.getByRole("cell", { name: /Barrel zone 1/ })).toBeVisible();
  await expect(page.getByRole("heading", { name: "Trends" })).toBeVisible();
  await page.getByRole("button", { name: "30 days" }).click();
  await page.waitForTimeout(1500);
  await page.screenshot({ path: `${SHOTS}/machine-1280.png`, fullPage: true });
  await page.setViewportSize({ width: 390, height: 844 });
  await page.screenshot({ path: `${SHOTS}/machine-390.png`, fullPage: true });
});

test("a site manager sees only Halden's machines", async ({ page }) => {
  await signInAs(page, "manager@halden.example");
  await page.goto("/o/corvid/machines?pageSize=50");
  await expect(page.getByText("26 machines")).toBeVisible();
  await expect(page.getByText("Mirabel Tubing")).toHaveCount(0);
});
