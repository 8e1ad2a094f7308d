import { expect, test, type Page } from "@playwright/test";
import { closeDb } from "../support/db";
import { ensureHealthDemo, type HealthDemo } from "./health-support";
import { signInAs, unique } from "./support";

// The loop-health pages: the overview's charts, the findings table driven by its URL, bulk
// acknowledgement, a finding's chart, and a retune request going from a site manager to an
// engineer and back. Screenshots go to data/screenshots/.

let demo: HealthDemo;
test.beforeAll(async () => {
  demo = await ensureHealthDemo();
});
test.afterAll(closeDb);

async function expectNoHorizontalOverflow(page: Page) {
  const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
  expect(overflow).toBeLessThanOrEqual(0);
}

for (const size of [{ name: "desktop", width: 1280, height: 900 }, { name: "phone", width: 390, height: 844 }]) {
  test(`the overview shows who needs attention and the 30-day trend (${size.width} px)`, async ({ page }) => {
    await page.setViewportSize(size);
    await signInAs(page, "manager@halden.example");
    await page.goto("/o/corvid");
    const attention = page.locator('section[aria-labelledby="attention-heading"]');
    await expect(attention.getByRole("heading", { name: "Machines needing attention" })).toBeVisible();
    await expect(attention).toContainText(demo.attentionSerial);
    const trend = page.locator('section[aria-labelledby="trend-heading"]');
    await expect(trend.locator("svg rect").first()).toBeVisible();
    await expect(trend.getByText("Loops by health, per day")).toBeVisible();
    // The tooltip names the day and the exact counts.
    const plot = trend.locator('svg[aria-label^="Loops by health"]');
    await plot.scrollIntoViewIfNeeded();
    const box = (await plot.boundingBox())!;
    await page.mouse.move(box.x + 5, box.y + 5);
    await page.mouse.move(box.x + box.width - 30, box.y + box.height / 2, { steps: 5 });
    const tooltip = page.locator(".visx-tooltip");
    await expect(tooltip).toContainText(/Steady\s*\d+\s*loops/);
    await expect(tooltip).toContainText(/\d{4}/); // the date, with its year
    await expectNoHorizontalOverflow(page);
    await page.screenshot({ path: `data/screenshots/health-overview-${size.name}.png`, fullPage: true });
  });
}

test("the findings table sorts, filters and pages through its URL", async ({ page }) => {
  await signInAs(page, "engineer@corvid.example");
  await page.goto("/o/corvid/findings?pageSize=2");
  const table = page.getByRole("region", { name: "Findings" });
  await expect(table.locator("tbody tr")).toHaveCount(2);
  await expect(page.getByText(/^\d+ findings$/)).toBeVisible();

  await table.getByRole("button", { name: "Severity" }).click();
  await expect(page).toHaveURL(/sort=severity/);
  const dir = new URL(page.url()).searchParams.get("dir");
  await table.getByRole("button", { name: "Severity" }).click();
  await expect(page).toHaveURL(new RegExp(`dir=${dir === "asc" ? "desc" : "asc"}`));

  await page.getByRole("link", { name: "Next →" }).click();
  await expect(page).toHaveURL(/page=2/);
  await expect(page.getByText(/Page 2 of \d+/)).toBeVisible();

  await page.getByLabel("Kind").selectOption("saturation");
  await page.getByRole("button", { name: "Apply" }).click();
  await expect(page).toHaveURL(/kind=saturation/);
  await expect(page).not.toHaveURL(/page=2/);
  for (const cell of await table.locator("tbody tr td:nth-child(3)").allTextContents()) expect(cell).toContain("Saturation");

  // The URL alone reproduces the view.
  const url = page.url();
  await page.goto(url);
  await expect(page.getByLabel("Kind")).toHaveValue("saturation");
  await page.screenshot({ path: "data/screenshots/health-findings-desktop.png", fullPage: true });
});

test("an engineer acknowledges several findings at once; a viewer gets no checkboxes", async ({ page, browser }) => {
  await signInAs(page, "engineer@corvid.example");
  await page.goto(`/o/corvid/findings?state=open&machineId=${demo.bulkMachineId}`);
  const table = page.getByRole("region", { name: "Findings" });
  const rows = table.locator("tbody tr");
  const count = await rows.count();
  expect(count).toBeGreaterThanOrEqual(2);
  await table.getByLabel("Select every finding on this page").check();
  await page.getByLabel("Comment (optional)").fill("Seen in the morning round");
  await page.getByRole("button", { name: "Acknowledge selected" }).click();
  await expect(page.getByRole("status").filter({ hasText: `${count} findings acknowledged.` })).toBeVisible();
  await page.goto(`/o/corvid/findings?state=acknowledged&machineId=${demo.bulkMachineId}`);
  await expect(table.locator("tbody tr")).toHaveCount(count);

  const viewer = await browser.newPage();
  await signInAs(viewer, "viewer@corvid.example");
  await viewer.goto("/o/corvid/findings");
  await expect(viewer.getByRole("region", { name: "Findings" })).toBeVisible();
  await expect(viewer.getByRole("checkbox")).toHaveCount(0);
  await expect(viewer.getByRole("button", { name: "Acknowledge selected" })).toHaveCount(0);
  await viewer.close();
});

test("a finding's page shows its metric with the threshold, what it means and the triage forms", async ({ page }) => {
  await signInAs(page, "manager@halden.example");
  await page.goto(`/o/corvid/findings/${demo.chartFindingId}`);
  await expect(page.getByRole("heading", { name: "What it means" })).toBeVisible();
  await expect(page.getByText("What to check first")).toBeVisible();
  const chart = page.locator('section[aria-labelledby="chart-heading"]');
  await expect(chart.locator('svg path[stroke="var(--color-accent)"]').first()).toBeVisible();
  await expect(chart.getByText("threshold", { exact: true })).toBeVisible();
  await expect(chart.getByText("window that tripped it")).toBeVisible();
  // Resolving needs a comment: the server says so when the browser's check is bypassed.
  await page.locator("#resolve-comment").evaluate((el) => el.removeAttribute("required"));
  await page.getByRole("button", { name: "Resolve" }).click();
  await expect(page.getByText("Say how it was resolved.").first()).toBeVisible();
  await page.screenshot({ path: "data/screenshots/health-finding-desktop.png", fullPage: true });
  await page.setViewportSize({ width: 390, height: 844 });
  await expectNoHorizontalOverflow(page);
  await page.screenshot({ path: "data/screenshots/health-finding-phone.png", fullPage: true });
});

test("a site manager asks for a retune; an engineer takes it on with a comment the site manager reads", async ({ page, browser }) => {
  const observation = unique("Zone 2 takes forty minutes to settle after a colour change");
  await signInAs(page, "manager@halden.example");
  await page.goto(`/o/corvid/machines/${demo.retuneMachineId}`);
  const form = page.locator('section[aria-labelledby="retune-heading"]');
  await form.getByLabel("Loop").selectOption({ index: 1 });
  await form.getByLabel("What you observe").fill(observation);
  await form.getByRole("button", { name: "Send retune request" }).click();
  await expect(form.getByText("Retune request sent")).toBeVisible();
  await page.goto("/o/corvid/retune-requests");
  const mine = page.locator("li").filter({ hasText: observation });
  await expect(mine.getByText("Waiting for an engineer")).toBeVisible();

  const engineer = await browser.newPage();
  await signInAs(engineer, "engineer@corvid.example");
  await engineer.goto("/o/corvid/retune-requests");
  const card = engineer.locator("li").filter({ hasText: observation });
  await card.getByLabel("Move to").selectOption("in_progress");
  const comment = "Looking at zone 2 this week: we will compare its heater output with the other zones first.";
  await card.getByLabel("Comment for the site manager").fill(comment);
  await card.getByRole("button", { name: "Update" }).click();
  await expect(card.getByText("Moved to")).toBeVisible();
  await engineer.close();

  await page.reload();
  await expect(mine.getByText("Being worked on").first()).toBeVisible();
  await expect(mine.getByText(comment)).toBeVisible();
  await mine.scrollIntoViewIfNeeded();
  await page.screenshot({ path: "data/screenshots/health-retune-site-manager-desktop.png", fullPage: true });
});
