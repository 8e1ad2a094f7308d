// Seed the demo scenario once: only when the database has no organisation yet.
import { sql } from "drizzle-orm";
import { closeDb, getDb } from "~/.server/db/client";
import { organisation } from "~/.server/db/schema";
import { addMember, assignSite, createCustomer, createMachine, createMachineModel, createOrganisation, createSite, createUser } from "../tests/factories";
import { getStripe } from "~/.server/billing/stripe";
import { seedDemoBilling } from "./seed/billing";
import { DEMO_FLEETS, DEMO_ORGANISATIONS, DEMO_PASSWORD } from "./seed/demo-data";
import { seedGainSets } from "./seed/gain-sets";
import { seedDemoRelease } from "./seed/demo-release";

/** One demo release per organisation with a fleet (scripts/seed/demo-release.ts). */
const DEMO_RELEASES: Record<string, { templateKey: string; author: string; approver: string }> = {
  corvid: { templateKey: "screw_speed", author: "engineer@corvid.example", approver: "engineer2@corvid.example" },
  pellworth: { templateKey: "flow", author: "engineer@pellworth.example", approver: "owner@pellworth.example" },
};

export async function seedDemo(): Promise<boolean> {
  const db = getDb();
  const [existing] = await db.select({ n: sql<number>`count(*)::int` }).from(organisation);
  if ((existing?.n ?? 0) > 0) return false;
  await db.transaction(async (tx) => {
    for (const demo of DEMO_ORGANISATIONS) {
      const org = await createOrganisation(tx, { name: demo.name, slug: demo.slug });
      const members = new Map<string, string>();
      const userIds = new Map<string, string>();
      for (const person of demo.people) {
        const created = await createUser(tx, { email: person.email, name: person.name, password: DEMO_PASSWORD });
        userIds.set(person.email, created.id);
        const membership = await addMember(tx, { organisationId: org.id, userId: created.id, role: person.role });
        members.set(person.email, membership.id);
      }
      const sitesByCustomer = new Map<string, string[]>();
      const siteIdsByName = new Map<string, string>();
      for (const c of demo.customers) {
        const created = await createCustomer(tx, { organisationId: org.id, name: c.name });
        const ids: string[] = [];
        for (const s of c.sites) {
          const createdSite = await createSite(tx, { organisationId: org.id, customerId: created.id, ...s });
          ids.push(createdSite.id);
          siteIdsByName.set(s.name, createdSite.id);
        }
        sitesByCustomer.set(c.name, ids);
      }
      const fleet = DEMO_FLEETS[demo.slug];
      if (fleet) {
        const model = await createMachineModel(tx, { organisationId: org.id, ...fleet.model });
        let n = 0;
        for (const group of fleet.machines) {
          for (let i = 0; i < group.count; i++, n++) {
            await createMachine(tx, {
              organisationId: org.id,
              modelId: model.id,
              siteId: siteIdsByName.get(group.site)!,
              serial: `${fleet.serialPrefix}${String(1001 + n * 7).padStart(4, "0")}`,
              firmware: fleet.firmware[n % fleet.firmware.length],
            });
          }
        }
        await seedGainSets(tx, { organisationId: org.id, slug: demo.slug, templates: model.templates, users: userIds });
        const release = DEMO_RELEASES[demo.slug];
        if (release) {
          await seedDemoRelease(tx, { organisationId: org.id, modelId: model.id, templateKey: release.templateKey, authorId: userIds.get(release.author)!, approverId: userIds.get(release.approver)! });
        }
      }
      for (const assignment of demo.siteManagers) {
        for (const siteId of sitesByCustomer.get(assignment.customer) ?? []) {
          await assignSite(tx, { organisationId: org.id, memberId: members.get(assignment.email)!, siteId });
        }
      }
    }
  });
  return true;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const seeded = await seedDemo();
  console.log(seeded ? "Demo data seeded." : "Database already has data; demo seed skipped.");
  // Every start: the demo organisations' subscriptions on the local Stripe (idempotent).
  const billed = await seedDemoBilling(getDb(), getStripe(), DEMO_ORGANISATIONS.map((o) => o.slug));
  console.log(`Demo billing on the local Stripe: ${billed.join(", ") || "none"}.`);
  await closeDb();
}
