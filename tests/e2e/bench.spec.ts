import { expect, test, type Page } from "@playwright/test";
import { signInAs } from "./support";

// The tuning bench: upload an exact FOPDT step test, see the fit and the proposals, try one.

/** K = 2, τ = 10 s, θ = 2 s, output 0 → 1 at t = 5 s, sampled every 0.1 s for 80 s. */
function exactStepTestCsv(): string {
  const lines = ["t,u,y"];
  for (let i = 0; i <= 800; i++) {
    const t = i / 10;
    const since = t - 5 - 2;
    const y = since > 0 ? 2 * (1 - Math.exp(-since / 10)) : 0;
    lines.push(`${t},${t >= 5 ? 1 : 0},${y.toFixed(6)}`);
  }
  return `${lines.join("\n")}\n`;
}

async function expectNoHorizontalOverflow(page: Page) {
  const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
  expect(overflow).toBeLessThanOrEqual(0);
}

/** Charts redraw shortly after a resize; wait until every chart fits its box. */
async function expectChartsFit(page: Page) {
  await expect
    .poll(() =>
      page.evaluate(() =>
        [...document.querySelectorAll("figure div.relative")].every((box) => {
          const svg = box.querySelector(":scope > svg");
          return svg !== null && Number(svg.getAttribute("width")) <= box.getBoundingClientRect().width + 1;
        }),
      ),
    )
    .toBe(true);
}

/** The three numbers K, τ, θ shown in a model card. */
async function modelNumbers(page: Page, source: string) {
  const card = page.getByTestId(`model-${source}`);
  const values = await card.locator("dd").allTextContents();
  return values.map((text) => Number(text.replace("−", "-").match(/-?[\d.]+(e-?\d+)?/)![0]));
}

test("an engineer uploads a step test, compares proposals and tries one", async ({ page }) => {
  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, "engineer@corvid.example");
  await page.goto("/o/corvid/bench");
  await expect(page.getByRole("heading", { name: "Tuning bench", level: 1 })).toBeVisible();
  await expect(page.getByRole("heading", { name: "Start from a step test or a model" })).toBeVisible();
  await expect(page.getByRole("button", { name: "Load the example step test" })).toBeVisible();
  await page.screenshot({ path: "data/screenshots/bench-empty-desktop.png", fullPage: true });

  await page.getByLabel("Choose a CSV file").setInputFiles({ name: "kiln-step.csv", mimeType: "text/csv", buffer: Buffer.from(exactStepTestCsv()) });

  // The least-squares fit from the API recovers the model; the two-point estimates sit beside it.
  await expect(page.getByTestId("model-least-squares").locator("dd")).toHaveCount(3);
  const [k, tau, theta] = await modelNumbers(page, "least-squares");
  expect(Math.abs(k - 2)).toBeLessThan(0.02);
  expect(Math.abs(tau - 10)).toBeLessThan(0.1);
  expect(Math.abs(theta - 2)).toBeLessThan(0.05);
  const [smithK] = await modelNumbers(page, "smith");
  expect(Math.abs(smithK - 2)).toBeLessThan(0.05);
  await expect(page.getByTestId("model-sundaresan-krishnaswamy").locator("dd")).toHaveCount(3);

  // Every proposal, with a risk flag in words.
  const table = page.getByRole("region", { name: "Tuning proposals" });
  await expect(table.locator("tbody tr")).toHaveCount(14);
  await expect(table.getByText("Risky").or(table.getByText("Unstable")).first()).toBeVisible();
  await expect(table.getByText("Sound").first()).toBeVisible();

  // Sorting by Ms puts the smallest first.
  await table.getByRole("button", { name: /^Ms/ }).click();
  await expect(table.getByRole("columnheader", { name: /^Ms/ })).toHaveAttribute("aria-sort", "ascending");

  // Pick a proposal: the response chart shows it.
  await table.getByRole("radio", { name: "Use SIMC PI" }).check();
  await expect(page.getByTestId("gains-origin")).toHaveText("From SIMC PI");
  const charts = page.getByTestId("response-charts");
  await expect(charts.locator('svg[aria-label^="Process value: Set point, Process value"]')).toBeVisible();
  await expect(charts.locator('svg[aria-label^="Controller output: Output"]')).toBeVisible();
  await expect(charts.getByText("High limit")).toBeVisible();
  // The tooltip gives the exact values at the nearest sample.
  await charts.locator('svg[aria-label^="Process value: Set point, Process value"]').hover({ position: { x: 200, y: 80 } });
  await expect(page.getByText(/^t = /)).toBeVisible();
  await page.getByRole("region", { name: "Closed-loop response", exact: true }).screenshot({ path: "data/screenshots/bench-tooltip-desktop.png" });

  // Edit by hand: the response follows.
  const kc = page.getByLabel("Kc", { exact: true });
  await kc.fill("3");
  await expect(page.getByTestId("gains-origin")).toHaveText("Gains edited by hand");
  await expect(page.getByRole("button", { name: "Back to SIMC PI" })).toBeVisible();
  await page.getByRole("button", { name: "Back to SIMC PI" }).click();
  await expect(page.getByTestId("gains-origin")).toHaveText("From SIMC PI");

  // Parallel form in the table.
  await page.getByRole("radio", { name: "Parallel kp, ki, kd" }).click();
  await expect(table.getByRole("columnheader", { name: /^ki/ })).toBeVisible();
  await page.getByRole("radio", { name: "Standard Kc, Ti, Td" }).click();

  await expectNoHorizontalOverflow(page);
  await expectChartsFit(page);
  await page.screenshot({ path: "data/screenshots/bench-desktop.png", fullPage: true });

  await page.setViewportSize({ width: 390, height: 844 });
  await expect(table.locator("tbody tr")).toHaveCount(14);
  await expectChartsFit(page);
  await expectNoHorizontalOverflow(page);
  await page.screenshot({ path: "data/screenshots/bench-phone.png", fullPage: true });
  for (const name of ["Step test and models", "Loop settings", "Proposals", "Closed-loop response"]) {
    const slug = name.toLowerCase().replace(/[^a-z]+/g, "-");
    await page.getByRole("region", { name, exact: true }).screenshot({ path: `data/screenshots/bench-phone-${slug}.png` });
  }
});

test("the example step test works without a file, and a file without a step is refused in words", async ({ page }) => {
  await page.setViewportSize({ width: 390, height: 844 });
  await signInAs(page, "engineer@corvid.example");
  await page.goto("/o/corvid/bench");
  await expectNoHorizontalOverflow(page);
  await page.screenshot({ path: "data/screenshots/bench-empty-phone.png", fullPage: true });
  await page.getByRole("button", { name: "Load the example step test" }).click();
  await expect(page.getByRole("region", { name: "Step test and models" }).getByText("example-step-test.csv")).toBeVisible();
  await expect(page.getByRole("region", { name: "Tuning proposals" }).locator("tbody tr").first()).toBeVisible();
  await expect(page.getByTestId("response-charts")).toBeVisible();

  const flat = ["t,u,y", ...Array.from({ length: 50 }, (_, i) => `${i},5,${(20 + 0.01 * (i % 3)).toFixed(2)}`)].join("\n");
  await page.getByLabel("Upload a step test").setInputFiles({ name: "flat.csv", mimeType: "text/csv", buffer: Buffer.from(flat) });
  await expect(page.getByRole("alert")).toContainText("no step");
});

test("a typed model goes straight to the proposals", async ({ page }) => {
  await signInAs(page, "engineer@corvid.example");
  await page.goto("/o/corvid/bench");
  await page.getByLabel("Process gain K").fill("1.5");
  await page.getByLabel("Time constant τ").fill("30");
  await page.getByLabel("Dead time θ").fill("4");
  await page.getByRole("button", { name: "Tune this model" }).click();
  await expect(page.getByRole("region", { name: "Tuning proposals" }).locator("tbody tr")).toHaveCount(14);
  await expect(page.getByTestId("response-charts")).toBeVisible();
});

test("a viewer may not open the bench", async ({ page }) => {
  await signInAs(page, "viewer@corvid.example");
  const response = await page.goto("/o/corvid/bench");
  expect(response?.status()).toBe(403);
  await expect(page.getByRole("heading", { name: "Not allowed" })).toBeVisible();
  await expect(page.getByRole("link", { name: "Tuning bench" })).toHaveCount(0);
});

test("gains from the bench are saved as a draft gain set of a loop template", async ({ page }) => {
  await signInAs(page, "engineer@corvid.example");
  await page.goto("/o/corvid/bench");
  // A heater-like model; its SIMC PI gains lie inside the barrel zones' safety envelope.
  await page.getByLabel("Process gain K").fill("1.5");
  await page.getByLabel("Time constant τ").fill("300");
  await page.getByLabel("Dead time θ").fill("20");
  await page.getByRole("button", { name: "Tune this model" }).click();
  await expect(page.getByTestId("response-charts")).toBeVisible();
  const loop = page.getByLabel("Loop template");
  const zone = await loop.locator("option", { hasText: "zone_1" }).first().getAttribute("value");
  await loop.selectOption(zone!);
  await page.getByLabel("Note").fill("Tried on the bench");
  await page.getByRole("button", { name: "Save as draft gain set" }).click();
  // The saved draft opens on its own page, where it can be proposed.
  await expect(page).toHaveURL(/\/o\/corvid\/gain-sets\/[0-9a-f-]{36}$/);
  await expect(page.getByText("Rationale: Tried on the bench")).toBeVisible();
  await page.screenshot({ path: "data/screenshots/bench-save-draft-desktop.png" });
});
