// Factories shared by the tests and the demo seed. Each writes straight to the database
// (no e-mail, no HTTP) and returns what it created.
import { hashPassword } from "better-auth/crypto";
import type { Db } from "~/.server/db/client";
import { account, customer, member, organisation, site, siteAssignment, user } from "~/.server/db/schema";
import type { Role } from "~/lib/access/capabilities";

let counter = 0;
export function uniqueSuffix(): string {
  counter += 1;
  return `${Date.now().toString(36)}${counter.toString(36)}${Math.random().toString(36).slice(2, 6)}`;
}

const hashCache = new Map<string, string>();

export async function createUser(
  db: Db,
  { email, name, password = "flyball-demo", verified = true }: { email: string; name: string; password?: string; verified?: boolean },
) {
  const id = crypto.randomUUID();
  let hash = hashCache.get(password);
  if (!hash) hashCache.set(password, (hash = await hashPassword(password)));
  await db.insert(user).values({ id, email: email.toLowerCase(), name, emailVerified: verified });
  await db.insert(account).values({ id: crypto.randomUUID(), accountId: id, providerId: "credential", userId: id, password: hash });
  return { id, email: email.toLowerCase(), name, password };
}

export async function createOrganisation(db: Db, { name, slug }: { name: string; slug: string }) {
  const id = crypto.randomUUID();
  await db.insert(organisation).values({ id, name, slug });
  return { id, name, slug };
}

export async function addMember(db: Db, { organisationId, userId, role }: { organisationId: string; userId: string; role: Role }) {
  const id = crypto.randomUUID();
  await db.insert(member).values({ id, organizationId: organisationId, userId, role });
  return { id, organisationId, userId, role };
}

export async function createCustomer(db: Db, { organisationId, name }: { organisationId: string; name: string }) {
  const [row] = await db.insert(customer).values({ organisationId, name }).returning();
  return row!;
}

export async function createSite(db: Db, { organisationId, customerId, name, timeZone = "UTC" }: { organisationId: string; customerId: string; name: string; timeZone?: string }) {
  const [row] = await db.insert(site).values({ organisationId, customerId, name, timeZone }).returning();
  return row!;
}

export async function assignSite(db: Db, { organisationId, memberId, siteId }: { organisationId: string; memberId: string; siteId: string }) {
  await db.insert(siteAssignment).values({ organisationId, memberId, siteId });
}

/** A fresh organisation with one member of each given role, for isolation tests. */
export async function createTeam(db: Db, roles: Role[] = ["owner"]) {
  const suffix = uniqueSuffix();
  const org = await createOrganisation(db, { name: `Test Org ${suffix}`, slug: `test-${suffix}` });
  const people = [];
  for (const role of roles) {
    const person = await createUser(db, { email: `${role}-${suffix}@test.example`, name: `${role} ${suffix}` });
    const membership = await addMember(db, { organisationId: org.id, userId: person.id, role });
    people.push({ ...person, role, memberId: membership.id });
  }
  return { organisation: org, people };
}
