// Password reset, organisation creation and invitation housekeeping over HTTP.
import { and, eq } from "drizzle-orm";
import { afterAll, describe, expect, it } from "vitest";
import { invitation, member, organisation } from "~/.server/db/schema";
import { addMember, createOrganisation, createUser, uniqueSuffix } from "../factories";
import { firstLink, get, inbox, postForm, signIn } from "../support/http";
import { closeDb, db } from "../support/db";

afterAll(closeDb);

describe("password reset", () => {
  it("e-mails a link that sets a new password, after which the old one fails", async () => {
    const email = `reset-${uniqueSuffix()}@example.com`;
    await createUser(db(), { email, name: "Reset Person", password: "the-old-password" });
    const asked = await postForm("/forgot-password", { email });
    expect(asked.status).toBe(200);
    const [message] = await inbox(email);
    expect(message?.subject).toContain("password");
    // better-auth's link checks the token and redirects to our page with it.
    const link = new URL(firstLink(message!));
    const redirect = await get(link.pathname + link.search);
    expect(redirect.status).toBe(302);
    const target = new URL(redirect.headers.get("location")!, "http://x");
    const token = target.searchParams.get("token")!;
    expect(target.pathname).toBe("/reset-password");

    expect((await postForm("/reset-password", { token, password: "short" })).status).toBe(400);
    const reset = await postForm("/reset-password", { token, password: "the-new-password" });
    expect(reset.status).toBe(302);
    expect(reset.headers.get("location")).toBe("/sign-in?reset=1");
    await expect(signIn(email, "the-old-password")).rejects.toThrow();
    await expect(signIn(email, "the-new-password")).resolves.toBeTruthy();
    // A used token does not work twice.
    expect((await postForm("/reset-password", { token, password: "yet-another-password" })).status).toBe(400);
  });

  it("answers the same for an address without an account", async () => {
    const response = await postForm("/forgot-password", { email: `nobody-${uniqueSuffix()}@example.com` });
    expect(response.status).toBe(200);
    expect(await response.text()).toContain("If an account uses this address");
  });
});

describe("organisations", () => {
  it("refuses a taken or malformed address and creates nothing", async () => {
    const session = await signIn("engineer@corvid.example");
    const taken = await postForm("/organisations/new", { name: "Another Corvid", slug: "corvid" }, session);
    expect(taken.status).toBe(400);
    expect(await taken.text()).toContain("already used");
    const malformed = await postForm("/organisations/new", { name: "Bad", slug: "Bad Slug!" }, session);
    expect(malformed.status).toBe(400);
    const rows = await db().select().from(organisation).where(eq(organisation.name, "Another Corvid"));
    expect(rows).toHaveLength(0);
  });

  it("makes the creator the owner", async () => {
    const session = await signIn("engineer2@corvid.example");
    const slug = `eng2-${uniqueSuffix()}`;
    const created = await postForm("/organisations/new", { name: "Side Project", slug }, session);
    expect(created.status).toBe(302);
    expect(created.headers.get("location")).toBe(`/o/${slug}`);
    const [org] = await db().select().from(organisation).where(eq(organisation.slug, slug));
    const [membership] = await db().select().from(member).where(eq(member.organizationId, org!.id));
    expect(membership?.role).toBe("owner");
    expect((await get(`/o/${slug}`, session)).status).toBe(200);
  });
});

describe("invitations", () => {
  it("can be resent and revoked by an admin, and a revoked one cannot be accepted", async () => {
    const suffix = uniqueSuffix();
    const org = await createOrganisation(db(), { name: `Invite Org ${suffix}`, slug: `inv-${suffix}` });
    const admin = await createUser(db(), { email: `admin-${suffix}@example.com`, name: "Ann Admin" });
    await addMember(db(), { organisationId: org.id, userId: admin.id, role: "admin" });
    const session = await signIn(admin.email);
    const invitee = `invitee-${suffix}@example.com`;

    const invited = await postForm(`/o/${org.slug}/team`, { intent: "invite", email: invitee, role: "viewer" }, session);
    expect(invited.status).toBe(200);
    const [row] = await db().select().from(invitation).where(and(eq(invitation.organizationId, org.id), eq(invitation.email, invitee)));
    expect(row?.status).toBe("pending");

    expect((await postForm(`/o/${org.slug}/team`, { intent: "resend", id: row!.id }, session)).status).toBe(200);
    expect(await inbox(invitee)).toHaveLength(2);

    // An admin may not invite an owner.
    expect((await postForm(`/o/${org.slug}/team`, { intent: "invite", email: `o-${suffix}@example.com`, role: "owner" }, session)).status).toBe(403);

    expect((await postForm(`/o/${org.slug}/team`, { intent: "revoke", id: row!.id }, session)).status).toBe(200);
    const [revoked] = await db().select().from(invitation).where(eq(invitation.id, row!.id));
    expect(revoked?.status).toBe("canceled");

    const person = await createUser(db(), { email: invitee, name: "Late Invitee" });
    const personSession = await signIn(person.email);
    const page = await get(`/invitations/${row!.id}`, personSession);
    expect(await page.text()).toContain("can no longer be used");
    const accept = await postForm(`/invitations/${row!.id}`, {}, personSession);
    expect(accept.status).toBe(400);
    const members = await db().select().from(member).where(and(eq(member.organizationId, org.id), eq(member.userId, person.id)));
    expect(members).toHaveLength(0);
  });
});
