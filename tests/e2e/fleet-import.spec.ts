// The CSV import page in a real browser: upload, the report with one-time codes and skipped
// rows, the codes as a downloaded CSV; screenshots at desktop and phone widths. The machines
// it registers are removed afterwards so the demo fleet other specs count stays as seeded.
import { readFile } from "node:fs/promises";
import { expect, test } from "@playwright/test";
import pg from "pg";
import { signInAs, unique } from "./support";

const SHOTS = "data/screenshots";
const prefix = unique("E2E-IMP").toUpperCase();

test.afterAll(async () => {
  if (!process.env.DATABASE_URL) return;
  const client = new pg.Client({ connectionString: process.env.DATABASE_URL });
  await client.connect();
  await client.query("delete from machine where serial like $1 and organisation_id = (select id from organisation where slug = 'corvid')", [`${prefix}%`]);
  await client.end();
});

test("importing machines from CSV shows a per-row report and the codes once", async ({ page }) => {
  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, "engineer@corvid.example");
  const sites = (await (await page.request.get("/api/v1/o/corvid/sites?pageSize=200")).json()) as { items: { name: string }[] };
  const site = sites.items.find((s) => sites.items.filter((t) => t.name === s.name).length === 1)!.name;
  const model = ((await (await page.request.get("/api/v1/o/corvid/models")).json()) as { items: { name: string }[] }).items[0]!.name;
  const existing = ((await (await page.request.get("/api/v1/o/corvid/machines?pageSize=1")).json()) as { items: { serial: string }[] }).items[0]!.serial;

  const rows = [
    "serial,model,site,firmware",
    ...[1, 2, 3].map((n) => `${prefix}-${n},${model},${site},4.2.0`),
    `${prefix}-4,${model},Atlantis Works,4.2.0`,
    `${prefix}-5,${model},${site},`,
    `${existing},${model},${site},4.2.0`,
    `${prefix}-6,Kiln 9,${site},`,
    `${prefix}-7,${model},${site},4.2.1`,
  ];
  await page.goto("/o/corvid/machines");
  await page.getByRole("link", { name: "Import from CSV" }).click();
  await expect(page.getByRole("heading", { name: "Import machines" })).toBeVisible();
  await page.getByLabel("CSV file").setInputFiles({ name: "machines.csv", mimeType: "text/csv", buffer: Buffer.from(rows.join("\n")) });
  await page.getByLabel("Import the valid rows").check();
  await page.getByRole("button", { name: "Upload and check" }).click();

  await expect(page.getByText("5 machines imported")).toBeVisible();
  await expect(page.getByRole("cell", { name: /unknown site "Atlantis Works"/ })).toBeVisible();
  await expect(page.getByRole("cell", { name: /already registered/ })).toBeVisible();
  await expect(page.getByText(/^FB-[A-Z0-9]{5}-/).filter({ visible: true })).toHaveCount(5);
  await page.screenshot({ path: `${SHOTS}/import-1280.png`, fullPage: true });

  const download = page.waitForEvent("download");
  await page.getByRole("link", { name: "Download codes as CSV" }).click();
  const file = await readFile(await (await download).path());
  const lines = file.toString("utf8").trim().split(/\r\n/);
  expect(lines[0]).toBe("serial,enrolmentCode");
  expect(lines).toHaveLength(6);
  expect(lines[1]).toMatch(new RegExp(`^${prefix}-1,FB-`));

  await page.setViewportSize({ width: 390, height: 844 });
  // On a phone the codes fold under the serials rather than scrolling out of sight.
  await expect(page.getByText(/^FB-[A-Z0-9]{5}-/).filter({ visible: true })).toHaveCount(5);
  await page.screenshot({ path: `${SHOTS}/import-390.png`, fullPage: true });
});
