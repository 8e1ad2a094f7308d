import { expect, test } from "@playwright/test";
import { signInAs } from "./support";

// Four-eyes in the browser: an engineer saves the bench's gains as a draft and proposes it;
// the same engineer cannot approve it; a second engineer approves it. Then the comparison
// view and the audit log, with screenshots.

test("a bench draft is proposed by one engineer and approved by another", async ({ browser }) => {
  const first = await browser.newPage({ viewport: { width: 1280, height: 900 } });
  await signInAs(first, "engineer@corvid.example");
  await first.goto("/o/corvid/bench");
  await first.getByRole("button", { name: "Load the example step test" }).first().click();
  const table = first.getByRole("region", { name: "Tuning proposals" });
  await expect(table.locator("tbody tr").first()).toBeVisible();
  await table.getByRole("radio", { name: "Use SIMC PI" }).check();
  // Gains for barrel zone 1 (inside its envelope and margins on its reference model).
  await first.getByRole("radio", { name: "Standard Kc, Ti, Td" }).click();
  await first.getByLabel("Kc", { exact: true }).fill("6");
  await first.getByLabel("Ti", { exact: true }).fill("150");
  await first.getByLabel("Td", { exact: true }).fill("0");
  await first.getByLabel("Loop template").selectOption({ label: "Extrusion line · Barrel zone 1 (zone_1)" });
  await first.getByLabel("Note").fill("Browser test: slightly slower integral than v1.");
  await first.getByRole("button", { name: "Save as draft gain set" }).click();

  // Saving leads to the draft's own page.
  await expect(first).toHaveURL(/\/o\/corvid\/gain-sets\/[0-9a-f-]{36}$/);
  const url = first.url();
  await expect(first.getByText("Draft", { exact: true }).first()).toBeVisible();
  await expect(first.locator("p", { hasText: "Rationale:" })).toContainText("Browser test: slightly slower integral than v1.");
  await first.getByRole("button", { name: /^Propose v\d+$/ }).click();
  await expect(first.getByText(/Proposed v\d+ — every check passed/)).toBeVisible();

  // The proposer sees no approve button, only why.
  await expect(first.getByText("You proposed this gain set")).toBeVisible();
  await expect(first.getByRole("button", { name: /^Approve v/ })).toHaveCount(0);

  const second = await browser.newPage({ viewport: { width: 1280, height: 900 } });
  await signInAs(second, "engineer2@corvid.example");
  await second.goto(url);
  await expect(second.getByRole("note", { name: /Caution/ })).toBeVisible();
  await second.getByLabel(/Approval comment/).fill("Checked against the zone 1 reference model.");
  await second.screenshot({ path: "data/screenshots/gain-set-approve-desktop.png", fullPage: true });
  await second.getByRole("button", { name: /^Approve v\d+$/ }).click();
  await expect(second.getByText(/Approved v\d+\. It can now be released\./)).toBeVisible();
  await expect(second.getByRole("listitem").filter({ hasText: "Checked against the zone 1 reference model." })).toBeVisible();

  // The first engineer's page now says approved, with both names in the history.
  await first.reload();
  await expect(first.getByText("Approved", { exact: true }).first()).toBeVisible();
  await expect(first.getByRole("heading", { name: "History" })).toBeVisible();
  await first.close();
  await second.close();
});

test("the comparison view and the audit log", async ({ page }) => {
  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, "engineer@corvid.example");
  await page.goto("/o/corvid/gain-sets?state=approved");
  await expect(page.getByRole("heading", { name: "Gain sets", level: 1 })).toBeVisible();
  await page.goto("/o/corvid/gain-sets");
  // Seeded zone_1 v1 (approved) against v2 (proposed).
  await page.getByLabel("First").selectOption({ label: "zone_1 v1 (approved)" });
  await page.getByLabel("Second").selectOption({ label: "zone_1 v2 (proposed)" });
  await page.getByRole("button", { name: "Compare" }).first().click();
  await expect(page).toHaveURL(/gain-sets\/compare\?a=.+&b=.+/);
  await expect(page.getByRole("heading", { name: "Compare zone_1 v1 and zone_1 v2" })).toBeVisible();
  const step = page.locator("figure").filter({ hasText: "Set-point step of 1 °C" });
  const plot = step.locator("svg[aria-label]").first();
  await expect(plot).toBeVisible();
  await expect(page.locator("figure").filter({ hasText: "Load step of" })).toBeVisible();
  await expect(page.getByRole("rowheader", { name: /Phase margin/ })).toBeVisible();
  // The tooltip gives exact values.
  await plot.hover({ position: { x: 220, y: 90 } });
  await expect(page.getByText(/^t = /)).toBeVisible();
  await page.screenshot({ path: "data/screenshots/gain-sets-compare-desktop.png", fullPage: true });
  await page.setViewportSize({ width: 390, height: 844 });
  await page.reload();
  await expect(page.getByRole("heading", { name: "Compare zone_1 v1 and zone_1 v2" })).toBeVisible();
  await page.screenshot({ path: "data/screenshots/gain-sets-compare-phone.png", fullPage: true });

  await page.setViewportSize({ width: 1280, height: 900 });
  await page.goto("/o/corvid/audit");
  await expect(page.getByRole("heading", { name: "Audit log", level: 1 })).toBeVisible();
  await page.getByLabel("What").selectOption("gain_set");
  await page.getByRole("button", { name: "Filter" }).click();
  await expect(page).toHaveURL(/action=gain_set/);
  const rows = page.getByRole("region", { name: "Audit entries" }).locator("tbody tr");
  await expect(rows.first()).toBeVisible();
  await expect(page.getByRole("region", { name: "Audit entries" }).getByText("gain_set.approved").first()).toBeVisible();
  await expect(page.getByRole("link", { name: "Download CSV" })).toHaveAttribute("href", /format=csv.*action=gain_set|action=gain_set.*format=csv/);
  await page.screenshot({ path: "data/screenshots/audit-desktop.png", fullPage: true });
});
