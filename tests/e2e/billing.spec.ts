// Billing in a real browser: the owner starts checkout, pays on the local Stripe's card page,
// and comes back to an active plan; a new machine raises the quantity on Stripe; a declined
// card changes nothing and says so; a failed renewal shows past due. Screenshots of the trial,
// active and past-due pages and of the card page go to data/screenshots/.
import { expect, test, type Page } from "@playwright/test";
import { createTeam, createTestFleet } from "../factories";
import { closeDb, db } from "../support/db";
import { stripeAt } from "../support/stripe";
import { signInAs, unique } from "./support";

const SHOTS = "data/screenshots";
const stripe = stripeAt();

test.afterAll(closeDb);

async function payWith(page: Page, number: string) {
  await expect(page.getByRole("heading", { name: /Subscribe to/ })).toBeVisible();
  await page.getByLabel("Name on the card").fill("Test Owner");
  await page.getByLabel("Card number").fill(number);
  await page.getByLabel("Expiry (MM / YY)").fill("12 / 34");
  await page.getByLabel("Security code").fill("123");
  await page.getByRole("button", { name: /and subscribe/ }).click();
}

test("the owner subscribes on the card page, sees the plan active, and a new machine raises the quantity", async ({ page }) => {
  test.setTimeout(120_000);
  const team = await createTeam(db(), ["owner"]);
  const fleet = await createTestFleet(db(), { organisationId: team.organisation.id, machinesPerSite: 1 });
  const slug = team.organisation.slug;
  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, team.people[0]!.email);

  await page.goto(`/o/${slug}/billing`);
  await expect(page.getByRole("heading", { name: "Billing" })).toBeVisible();
  await expect(page.getByText("Trial", { exact: true }).first()).toBeVisible();
  await page.screenshot({ path: `${SHOTS}/billing-trial.png`, fullPage: true });

  // A declined card: the card page says so; back on the billing page the plan is unchanged.
  await page.getByRole("button", { name: "Start the per-machine subscription" }).click();
  await payWith(page, "4000 0000 0000 0002");
  await expect(page.getByRole("alert")).toContainText("declined");
  await page.screenshot({ path: `${SHOTS}/billing-card-page-declined.png`, fullPage: true });
  await page.getByRole("link", { name: "Back without subscribing" }).click();
  await expect(page).toHaveURL(new RegExp(`/o/${slug}/billing\\?checkout=cancelled`));
  await expect(page.getByText("No subscription was started")).toBeVisible();
  await expect(page.getByText("Your plan is unchanged")).toBeVisible();
  await expect(page.getByRole("button", { name: "Start the per-machine subscription" })).toBeVisible();

  // The succeeding card.
  await page.getByRole("button", { name: "Start the per-machine subscription" }).click();
  await expect(page.getByRole("heading", { name: /Subscribe to/ })).toBeVisible();
  await page.screenshot({ path: `${SHOTS}/billing-card-page.png`, fullPage: true });
  await payWith(page, "4242 4242 4242 4242");
  await expect(page).toHaveURL(new RegExp(`/o/${slug}/billing\\?checkout=done`));
  // The webhook reaches the app through a job: reload until the plan shows.
  await expect(async () => {
    await page.reload();
    await expect(page.getByText("Subscription active")).toBeVisible({ timeout: 1000 });
  }).toPass({ timeout: 30_000 });
  await expect(page.getByText("Per machine", { exact: true })).toBeVisible();
  await expect(page.getByRole("cell", { name: "Paid" })).toBeVisible();
  await page.screenshot({ path: `${SHOTS}/billing-active.png`, fullPage: true });

  // Registering a machine raises the quantity on Stripe.
  const response = await page.request.get(`/api/v1/o/${slug}/billing`);
  const before = (await response.json()) as { subscriptionId: string; machinesBilled: number };
  expect(before.machinesBilled).toBe(2);
  await page.goto(`/o/${slug}/machines/new`);
  await page.getByLabel("Serial").fill(unique("E2E"));
  await page.getByLabel("Site").selectOption({ label: `${fleet.customer.name}: ${fleet.sites[0].name}` });
  await page.getByRole("button", { name: "Register machine" }).click();
  await expect(page.getByText(/is registered/)).toBeVisible();
  await expect.poll(async () => (await stripe.subscriptions.retrieve(before.subscriptionId)).items.data[0]!.quantity, { timeout: 30_000 }).toBe(3);
  await expect(async () => {
    await page.goto(`/o/${slug}/billing`);
    await expect(page.getByText("3 active now")).toBeVisible({ timeout: 1000 });
    await expect(page.getByRole("definition").filter({ hasText: /^3$/ })).toBeVisible({ timeout: 1000 });
  }).toPass({ timeout: 30_000 });
});

test("a failed renewal shows past due, with the banner on every page", async ({ page }) => {
  test.setTimeout(120_000);
  const team = await createTeam(db(), ["owner"]);
  const slug = team.organisation.slug;
  await createTestFleet(db(), { organisationId: team.organisation.id, machinesPerSite: 1 });
  const price = (await stripe.prices.list({ lookup_keys: ["flyball_per_machine_monthly"] })).data[0]!;
  const clock = await stripe.testHelpers.testClocks.create({ frozen_time: Math.floor(Date.now() / 1000) - 40 * 86400 });
  const customer = await stripe.customers.create({ name: team.organisation.name, test_clock: clock.id, metadata: { organisation_id: team.organisation.id } });
  const good = await stripe.paymentMethods.attach("pm_card_visa", { customer: customer.id });
  await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: good.id } });
  const subscription = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 2 }], metadata: { organisation_id: team.organisation.id } });
  const bad = await stripe.paymentMethods.attach("pm_card_chargeDeclined", { customer: customer.id });
  await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: bad.id } });
  await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: subscription.items.data[0]!.current_period_end + 86400 });

  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, team.people[0]!.email);
  await expect(async () => {
    await page.goto(`/o/${slug}/billing`);
    await expect(page.getByText("Payment overdue")).toBeVisible({ timeout: 1000 });
  }).toPass({ timeout: 30_000 });
  await expect(page.getByText("New machines and releases are paused").first()).toBeVisible();
  await expect(page.getByRole("cell", { name: "Open, not paid" })).toBeVisible();
  await page.screenshot({ path: `${SHOTS}/billing-past-due.png`, fullPage: true });
  await page.goto(`/o/${slug}/machines`);
  await expect(page.getByRole("link", { name: "Fix it on the billing page" })).toBeVisible();
});

test("the demo organisation's billing page shows months of paid invoices", async ({ page }) => {
  await page.setViewportSize({ width: 1280, height: 900 });
  await signInAs(page, "owner@corvid.example");
  await page.goto("/o/corvid/billing");
  await expect(page.getByText("Per machine", { exact: true })).toBeVisible();
  await expect(page.getByText("Active", { exact: true })).toBeVisible();
  expect(await page.getByRole("cell", { name: "Paid" }).count()).toBeGreaterThanOrEqual(4);
  await page.screenshot({ path: `${SHOTS}/billing-demo.png`, fullPage: true });
});
