import { expect, type Page } from "@playwright/test";

export const INBOX_URL = process.env.RESEND_BASE_URL ?? "http://127.0.0.1:3035";

/** The newest message to an address, waiting briefly for it to arrive. */
export async function latestMessageTo(address: string) {
  let found: { id: string; subject: string; text: string } | undefined;
  await expect
    .poll(async () => {
      const response = await fetch(`${INBOX_URL}/api/messages?to=${encodeURIComponent(address)}`);
      found = ((await response.json()) as { items: { id: string; subject: string; text: string }[] }).items[0];
      return Boolean(found);
    })
    .toBe(true);
  return found!;
}

export async function signInAs(page: Page, email: string, password = "flyball-demo") {
  await page.goto("/sign-in");
  await page.getByLabel("E-mail").fill(email);
  await page.getByLabel("Password").fill(password);
  await page.getByRole("button", { name: "Sign in" }).click();
  await expect(page).not.toHaveURL(/sign-in/);
}

export function unique(prefix: string) {
  return `${prefix}-${Date.now().toString(36)}${Math.random().toString(36).slice(2, 6)}`;
}
