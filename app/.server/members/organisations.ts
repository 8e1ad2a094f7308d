import { asc, eq } from "drizzle-orm";
import { z } from "zod";
import { getAuth } from "~/.server/auth/auth";
import { readAuthResponse } from "~/.server/auth/call-auth";
import { recordAudit } from "~/.server/audit/record-audit";
import { createSigningKey } from "~/.server/device-auth/signing-keys";
import type { Db } from "~/.server/db/client";
import { getDb } from "~/.server/db/client";
import { member, organisation } from "~/.server/db/schema";
import { isRole, type Role } from "~/lib/access/capabilities";

export type OrganisationSummary = { id: string; name: string; slug: string; role: Role };

export async function listMemberships(db: Db, { userId }: { userId: string }): Promise<OrganisationSummary[]> {
  const rows = await db
    .select({ id: organisation.id, name: organisation.name, slug: organisation.slug, role: member.role })
    .from(member)
    .innerJoin(organisation, eq(organisation.id, member.organizationId))
    .where(eq(member.userId, userId))
    .orderBy(asc(organisation.name));
  return rows.flatMap((row) => (isRole(row.role) ? [{ ...row, role: row.role }] : []));
}

const RESERVED_SLUGS = new Set(["new", "api", "admin", "settings", "sign-in", "sign-up"]);

export const NewOrganisationSchema = z.object({
  name: z.string().trim().min(2, "Use at least 2 characters.").max(80, "Use at most 80 characters."),
  slug: z
    .string()
    .trim()
    .toLowerCase()
    .min(3, "Use at least 3 characters.")
    .max(40, "Use at most 40 characters.")
    .regex(/^[a-z0-9]+(-[a-z0-9]+)*$/, "Use lower-case letters, digits and single hyphens.")
    .refine((slug) => !RESERVED_SLUGS.has(slug), "This address is reserved; choose another."),
});

/** Create an organisation through better-auth; the creator becomes its owner. */
export async function createOrganisation(
  input: z.infer<typeof NewOrganisationSchema>,
  { headers, userId }: { headers: Headers; userId: string },
): Promise<{ ok: true; slug: string } | { ok: false; errors: Record<string, string[]> }> {
  const [taken] = await getDb().select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, input.slug)).limit(1);
  if (taken) return { ok: false, errors: { slug: ["This address is already used by another organisation."] } };
  const result = await readAuthResponse(
    await getAuth().api.createOrganization({ body: { name: input.name, slug: input.slug }, headers, asResponse: true }),
  );
  if (!result.ok) return { ok: false, errors: { form: [String(result.body.message ?? "The organisation could not be created.")] } };
  const organisationId = String(result.body.id);
  // The key that signs device configurations is made with the organisation, not on first use.
  await createSigningKey(getDb(), { organisationId });
  await recordAudit(getDb(), { organisationId, actor: userId, action: "organisation.created", targetType: "organisation", targetId: organisationId, detail: { name: input.name, slug: input.slug } });
  return { ok: true, slug: input.slug };
}
