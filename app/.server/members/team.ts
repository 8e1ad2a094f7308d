// The team page's domain: members, roles and invitations of one organisation.
import { DomainError } from "~/lib/errors";
import { and, asc, eq, sql } from "drizzle-orm";
import { z } from "zod";
import { getAuth } from "~/.server/auth/auth";
import { readAuthResponse } from "~/.server/auth/call-auth";
import type { Membership } from "~/.server/auth/guards";
import { recordAudit } from "~/.server/audit/record-audit";
import { getDb, type Db } from "~/.server/db/client";
import { invitation, member, organisation, user } from "~/.server/db/schema";
import { EmailDeliveryError, sendEmail } from "~/.server/email/send-email";
import { invitationEmail } from "~/.server/email/templates";
import { env } from "~/.server/env";
import { canAssignRole, canRemoveMember, isRole, ROLE_LABELS, ROLES } from "~/lib/access/capabilities";

export async function listTeam(db: Db, { organisationId }: { organisationId: string }) {
  const members = await db
    .select({ id: member.id, role: member.role, joinedAt: member.createdAt, userId: user.id, name: user.name, email: user.email })
    .from(member)
    .innerJoin(user, eq(user.id, member.userId))
    .where(eq(member.organizationId, organisationId))
    .orderBy(asc(user.name));
  const invitations = await db
    .select({ id: invitation.id, email: invitation.email, role: invitation.role, expiresAt: invitation.expiresAt, createdAt: invitation.createdAt })
    .from(invitation)
    .where(and(eq(invitation.organizationId, organisationId), eq(invitation.status, "pending")))
    .orderBy(asc(invitation.createdAt));
  return { members, invitations };
}

export const InviteSchema = z.object({
  email: z.email("Enter an e-mail address.").trim().toLowerCase(),
  role: z.enum(ROLES, "Choose a role."),
});

async function deliverInvitation(db: Db, actor: Membership, invitationId: string, email: string, role: string) {
  const url = `${env().BETTER_AUTH_URL}/invitations/${invitationId}`;
  const label = isRole(role) ? ROLE_LABELS[role] : role;
  try {
    await sendEmail({ to: email, ...invitationEmail(actor.user.name, actor.organisation.name, label, url) });
    return { sent: true as const };
  } catch (error) {
    return { sent: false as const, reason: error instanceof EmailDeliveryError ? error.message : "The invitation e-mail could not be sent." };
  }
}

/** Invite someone by e-mail. The invitation is kept even when the e-mail fails; the caller is told. */
export async function inviteMember(db: Db, actor: Membership, input: z.infer<typeof InviteSchema>, headers: Headers) {
  if (!canAssignRole(actor.role, "viewer", input.role)) throw new DomainError("forbidden", "Your role cannot invite with this role.", { status: 403 });
  const [existing] = await db
    .select({ id: member.id })
    .from(member)
    .innerJoin(user, eq(user.id, member.userId))
    .where(and(eq(member.organizationId, actor.organisation.id), eq(user.email, input.email)))
    .limit(1);
  if (existing) throw new DomainError("conflict", "This person is already a member.", { status: 409 });
  const result = await readAuthResponse(
    await getAuth().api.createInvitation({
      body: { email: input.email, role: input.role, organizationId: actor.organisation.id },
      headers,
      asResponse: true,
    }),
  );
  if (!result.ok) throw new DomainError("refused", String(result.body.message ?? "The invitation could not be created."));
  const invitationId = String(result.body.id);
  await recordAudit(db, { organisationId: actor.organisation.id, actor: actor.user.id, action: "invitation.created", targetType: "invitation", targetId: invitationId, detail: { email: input.email, role: input.role }, after: { email: input.email, role: input.role, status: "pending" } });
  return { invitationId, delivery: await deliverInvitation(db, actor, invitationId, input.email, input.role) };
}

async function requirePendingInvitation(db: Db, organisationId: string, invitationId: string) {
  const [row] = await db
    .select()
    .from(invitation)
    .where(and(eq(invitation.organizationId, organisationId), eq(invitation.id, invitationId), eq(invitation.status, "pending")))
    .limit(1);
  if (!row) throw new DomainError("not_found", "No pending invitation with this id.", { status: 404 });
  return row;
}

export async function resendInvitation(db: Db, actor: Membership, invitationId: string) {
  const row = await requirePendingInvitation(db, actor.organisation.id, invitationId);
  const expiresAt = new Date(Date.now() + 7 * 24 * 3600 * 1000);
  await db.update(invitation).set({ expiresAt }).where(and(eq(invitation.organizationId, actor.organisation.id), eq(invitation.id, row.id)));
  await recordAudit(db, { organisationId: actor.organisation.id, actor: actor.user.id, action: "invitation.resent", targetType: "invitation", targetId: row.id });
  return deliverInvitation(db, actor, row.id, row.email, row.role);
}

export async function revokeInvitation(db: Db, actor: Membership, invitationId: string) {
  const row = await requirePendingInvitation(db, actor.organisation.id, invitationId);
  await db.update(invitation).set({ status: "canceled" }).where(and(eq(invitation.organizationId, actor.organisation.id), eq(invitation.id, row.id)));
  await recordAudit(db, { organisationId: actor.organisation.id, actor: actor.user.id, action: "invitation.revoked", targetType: "invitation", targetId: row.id, detail: { email: row.email }, before: { email: row.email, status: "pending" }, after: { email: row.email, status: "canceled" } });
}

async function requireMember(db: Db, organisationId: string, memberId: string) {
  const [row] = await db
    .select({ id: member.id, role: member.role, userId: member.userId })
    .from(member)
    .where(and(eq(member.organizationId, organisationId), eq(member.id, memberId)))
    .for("update")
    .limit(1);
  if (!row) throw new DomainError("not_found", "No such member in this organisation.", { status: 404 });
  return row;
}

async function countOwners(db: Db, organisationId: string): Promise<number> {
  const [row] = await db
    .select({ n: sql<number>`count(*)::int` })
    .from(member)
    .where(and(eq(member.organizationId, organisationId), eq(member.role, "owner")));
  return row?.n ?? 0;
}

export const ChangeRoleSchema = z.object({ memberId: z.string().min(1), role: z.enum(ROLES, "Choose a role.") });

export async function changeMemberRole(db: Db, actor: Membership, input: z.infer<typeof ChangeRoleSchema>) {
  await db.transaction(async (tx) => {
    const target = await requireMember(tx, actor.organisation.id, input.memberId);
    if (!canAssignRole(actor.role, target.role, input.role)) throw new DomainError("forbidden", "Your role cannot make this change.", { status: 403 });
    if (target.role === "owner" && input.role !== "owner" && (await countOwners(tx, actor.organisation.id)) <= 1) {
      throw new DomainError("conflict", "The organisation needs at least one owner. Make someone else owner first.", { status: 409 });
    }
    await tx.update(member).set({ role: input.role }).where(and(eq(member.organizationId, actor.organisation.id), eq(member.id, target.id)));
    await recordAudit(tx, { organisationId: actor.organisation.id, actor: actor.user.id, action: "member.role_changed", targetType: "member", targetId: target.id, detail: { from: target.role, to: input.role }, before: { userId: target.userId, role: target.role }, after: { userId: target.userId, role: input.role } });
  });
}

export async function removeMember(db: Db, actor: Membership, memberId: string) {
  await db.transaction(async (tx) => {
    const target = await requireMember(tx, actor.organisation.id, memberId);
    const leaving = target.userId === actor.user.id;
    if (!leaving && !canRemoveMember(actor.role, target.role)) throw new DomainError("forbidden", "Your role cannot remove this member.", { status: 403 });
    if (target.role === "owner" && (await countOwners(tx, actor.organisation.id)) <= 1) {
      throw new DomainError("conflict", "The last owner cannot leave. Make someone else owner first.", { status: 409 });
    }
    await tx.delete(member).where(and(eq(member.organizationId, actor.organisation.id), eq(member.id, target.id)));
    await recordAudit(tx, { organisationId: actor.organisation.id, actor: actor.user.id, action: leaving ? "member.left" : "member.removed", targetType: "member", targetId: target.id, detail: { role: target.role }, before: { userId: target.userId, role: target.role } });
  });
}

/** What the accept page shows before anyone signs in. */
export async function getInvitationPreview(db: Db, invitationId: string) {
  const [row] = await db
    .select({ id: invitation.id, email: invitation.email, role: invitation.role, status: invitation.status, expiresAt: invitation.expiresAt, organisationName: organisation.name, slug: organisation.slug })
    .from(invitation)
    .innerJoin(organisation, eq(organisation.id, invitation.organizationId))
    .where(eq(invitation.id, invitationId))
    .limit(1);
  return row ?? null;
}

export async function acceptInvitation(invitationId: string, headers: Headers) {
  const result = await readAuthResponse(await getAuth().api.acceptInvitation({ body: { invitationId }, headers, asResponse: true }));
  if (!result.ok) throw new DomainError("refused", String(result.body.message ?? "The invitation could not be accepted."));
  const accepted = result.body as { member?: { id: string; organizationId: string; userId: string } };
  if (accepted.member) {
    await recordAudit(getDb(), { organisationId: accepted.member.organizationId, actor: accepted.member.userId, action: "invitation.accepted", targetType: "member", targetId: accepted.member.id, after: { userId: accepted.member.userId, role: (accepted.member as { role?: string }).role ?? null } });
  }
}
