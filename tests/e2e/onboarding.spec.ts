import { expect, test } from "@playwright/test";
import { latestMessageTo, unique } from "./support";

// The whole way in: sign up, confirm through the inbox, create an organisation, invite an
// engineer who accepts from the e-mailed link and cannot manage roles.
test("sign up, verify, create an organisation, invite an engineer who cannot change roles", async ({ page, browser, baseURL }) => {
  const ownerEmail = `${unique("founder")}@example.com`;
  const engineerEmail = `${unique("colleague")}@example.com`;
  const slug = unique("acme").toLowerCase();

  await page.goto("/sign-up");
  await page.getByLabel("Name").fill("Frida Founder");
  await page.getByLabel("Work e-mail").fill(ownerEmail);
  await page.getByLabel("Password").fill("a-long-password-1");
  await page.getByRole("button", { name: "Create account" }).click();
  await expect(page.getByText("Confirmation e-mail sent")).toBeVisible();

  // Open the confirmation link from the inbox page, as a person would.
  const confirmation = await latestMessageTo(ownerEmail);
  await page.goto(`${process.env.RESEND_BASE_URL ?? "http://127.0.0.1:3035"}/messages/${confirmation.id}`);
  await page.getByRole("link", { name: /verify-email/ }).click();
  await expect(page.getByRole("heading", { name: "Your organisations" })).toBeVisible();

  await page.getByRole("link", { name: "New organisation" }).click();
  await page.getByLabel("Name").fill("Acme Ovens");
  await page.getByLabel("Address").fill(slug);
  await page.getByRole("button", { name: "Create organisation" }).click();
  await expect(page).toHaveURL(new RegExp(`/o/${slug}$`));
  await expect(page.getByRole("heading", { name: "Acme Ovens" })).toBeVisible();

  await page.getByRole("navigation", { name: "Organisation" }).getByRole("link", { name: "Team" }).first().click();
  await page.getByLabel("E-mail").fill(engineerEmail);
  await page.getByLabel("Role").selectOption("engineer");
  await page.getByRole("button", { name: "Send invitation" }).click();
  await expect(page.getByText(`Invitation sent to ${engineerEmail}`)).toBeVisible();
  await expect(page.getByText(engineerEmail, { exact: true })).toBeVisible();

  // The colleague, in a browser of their own, follows the invitation link.
  const colleague = await browser.newContext({ baseURL });
  const other = await colleague.newPage();
  const invitation = await latestMessageTo(engineerEmail);
  const inviteLink = invitation.text.match(/https?:\/\/\S+\/invitations\/\S+/)![0];
  await other.goto(inviteLink);
  await expect(other.getByRole("heading", { name: "Join Acme Ovens" })).toBeVisible();
  await other.getByRole("link", { name: "Create account" }).click();
  await other.getByLabel("Name").fill("Carl Colleague");
  await expect(other.getByLabel("Work e-mail")).toHaveValue(engineerEmail);
  await other.getByLabel("Password").fill("another-long-password");
  await other.getByRole("button", { name: "Create account" }).click();
  await expect(other.getByText("Confirmation e-mail sent")).toBeVisible();
  const colleagueConfirmation = await latestMessageTo(engineerEmail);
  const verifyLink = colleagueConfirmation.text.match(/https?:\/\/\S+verify-email\S+/)![0];
  await other.goto(verifyLink);
  await expect(other.getByRole("heading", { name: "Join Acme Ovens" })).toBeVisible();
  await other.getByRole("button", { name: "Accept and join" }).click();
  await expect(other).toHaveURL(new RegExp(`/o/${slug}$`));
  await expect(other.getByRole("heading", { name: "Acme Ovens" })).toBeVisible();

  // The engineer sees the team but no role controls.
  await other.goto(`/o/${slug}/team`);
  await expect(other.getByRole("heading", { name: "Members" })).toBeVisible();
  await expect(other.getByText("Frida Founder")).toBeVisible();
  await expect(other.getByRole("combobox", { name: /Role of/ })).toHaveCount(0);
  await expect(other.getByRole("button", { name: "Send invitation" })).toHaveCount(0);
  await expect(other.getByRole("button", { name: "Remove" })).toHaveCount(0);

  // A forged role change from the engineer's session is refused and changes nothing.
  await page.reload();
  const ownerRow = page.getByRole("row", { name: /Carl Colleague/ });
  await expect(ownerRow.getByRole("combobox")).toHaveValue("engineer");
  const memberId = await ownerRow.locator('input[name="memberId"]').getAttribute("value");
  const forged = await other.request.post(`/o/${slug}/team`, {
    form: { intent: "change-role", memberId: memberId!, role: "admin" },
    headers: { origin: baseURL! },
  });
  expect(forged.status()).toBe(403);
  await page.reload();
  await expect(page.getByRole("row", { name: /Carl Colleague/ }).getByRole("combobox")).toHaveValue("engineer");
  await colleague.close();
});
