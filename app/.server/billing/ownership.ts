// Handing the organisation over: the owner makes another member the owner and becomes an admin.
import { and, eq, ne } from "drizzle-orm";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { member, user } from "~/.server/db/schema";
import { DomainError } from "~/lib/errors";

export async function listOwnershipCandidates(db: Db, { organisationId, exceptUserId }: { organisationId: string; exceptUserId: string }) {
  return db
    .select({ memberId: member.id, name: user.name, email: user.email, role: member.role })
    .from(member)
    .innerJoin(user, eq(user.id, member.userId))
    .where(and(eq(member.organizationId, organisationId), ne(member.userId, exceptUserId), ne(member.role, "site_manager")))
    .orderBy(user.name);
}

/** Run inside a transaction. The caller must be an owner (checked by the route's capability and here). */
export async function transferOwnership(db: Db, { organisationId, fromMemberId, actor, toMemberId }: { organisationId: string; fromMemberId: string; actor: string; toMemberId: string }) {
  const [from] = await db.select({ role: member.role }).from(member).where(and(eq(member.organizationId, organisationId), eq(member.id, fromMemberId))).for("update");
  if (!from || from.role !== "owner") throw new DomainError("forbidden", "Only the owner can hand over ownership.", { status: 403 });
  if (toMemberId === fromMemberId) throw new DomainError("same_member", "Choose another member.", { status: 400, field: "memberId" });
  const [to] = await db
    .select({ role: member.role, name: user.name })
    .from(member)
    .innerJoin(user, eq(user.id, member.userId))
    .where(and(eq(member.organizationId, organisationId), eq(member.id, toMemberId)))
    .for("update", { of: member });
  if (!to) throw new DomainError("unknown_member", "No such member in this organisation.", { status: 400, field: "memberId" });
  if (to.role === "site_manager") throw new DomainError("not_eligible", "A site manager belongs to a customer and cannot own the organisation.", { status: 400, field: "memberId" });
  await db.update(member).set({ role: "owner" }).where(and(eq(member.organizationId, organisationId), eq(member.id, toMemberId)));
  await db.update(member).set({ role: "admin" }).where(and(eq(member.organizationId, organisationId), eq(member.id, fromMemberId)));
  await recordAudit(db, { organisationId, actor, action: "organisation.ownership_transferred", targetType: "member", targetId: toMemberId, detail: { fromMemberId, previousRole: to.role, newOwner: to.name } });
  return { newOwner: to.name };
}
