// Bad sign-up input gets a clear message and creates nothing.
import { eq, sql } from "drizzle-orm";
import { afterAll, describe, expect, it } from "vitest";
import { user } from "~/.server/db/schema";
import { postForm, inbox, firstLink, get } from "../support/http";
import { closeDb, db } from "../support/db";
import { uniqueSuffix } from "../factories";

afterAll(closeDb);

async function userCount() {
  const [row] = await db().select({ n: sql<number>`count(*)::int` }).from(user);
  return row!.n;
}

describe("sign-up", () => {
  it.each([
    ["a short password", { name: "Ada", email: () => `short-${uniqueSuffix()}@example.com`, password: "short" }, "at least 10 characters"],
    ["a malformed e-mail", { name: "Ada", email: () => "ada-at-example", password: "long-enough-password" }, "Enter an e-mail address"],
    ["an empty name", { name: "", email: () => `noname-${uniqueSuffix()}@example.com`, password: "long-enough-password" }, "Enter your name"],
  ])("refuses %s with a message and creates nothing", async (_label, input, message) => {
    const before = await userCount();
    const response = await postForm("/sign-up", { name: input.name, email: input.email(), password: input.password });
    expect(response.status).toBe(400);
    expect(await response.text()).toContain(message);
    expect(await userCount()).toBe(before);
  });

  it("refuses a duplicate e-mail and leaves the existing account alone", async () => {
    const before = await userCount();
    const response = await postForm("/sign-up", { name: "Someone Else", email: "OWNER@corvid.example", password: "long-enough-password" });
    expect(response.status).toBe(400);
    expect(await response.text()).toContain("already exists");
    expect(await userCount()).toBe(before);
    const [owner] = await db().select().from(user).where(eq(user.email, "owner@corvid.example"));
    expect(owner?.name).toBe("Ines Marlowe");
  });

  it("creates an unverified account, e-mails a link, and the link verifies and signs in", async () => {
    const email = `new-${uniqueSuffix()}@example.com`;
    const response = await postForm("/sign-up", { name: "New Person", email, password: "long-enough-password" });
    expect(response.status).toBe(200);
    expect(await response.text()).toContain("Confirmation e-mail sent");
    const [created] = await db().select().from(user).where(eq(user.email, email));
    expect(created?.emailVerified).toBe(false);

    const signInBefore = await postForm("/sign-in", { email, password: "long-enough-password" });
    expect(signInBefore.status).toBe(403);

    const [message] = await inbox(email);
    const link = new URL(firstLink(message!));
    const verify = await get(link.pathname + link.search);
    expect(verify.status).toBe(302);
    expect(verify.headers.getSetCookie().join(";")).toContain("session_token");
    const [verified] = await db().select().from(user).where(eq(user.email, email));
    expect(verified?.emailVerified).toBe(true);
  });
});
