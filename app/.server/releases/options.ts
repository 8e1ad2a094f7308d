// What the release pages offer to choose from: approved gain sets, and the customers, sites
// and machines of a gain set's model.
import { and, asc, eq } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { customer, gainSet, loopTemplate, machine, machineModel, site } from "~/.server/db/schema";

export async function listReleasableGainSets(db: Db, { organisationId }: { organisationId: string }) {
  return db
    .select({ id: gainSet.id, version: gainSet.version, gains: gainSet.gains, templateKey: loopTemplate.key, templateName: loopTemplate.name, modelName: machineModel.name })
    .from(gainSet)
    .innerJoin(loopTemplate, and(eq(loopTemplate.organisationId, gainSet.organisationId), eq(loopTemplate.id, gainSet.loopTemplateId)))
    .innerJoin(machineModel, and(eq(machineModel.organisationId, loopTemplate.organisationId), eq(machineModel.id, loopTemplate.modelId)))
    .where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.state, "approved")))
    .orderBy(asc(machineModel.name), asc(loopTemplate.key), asc(gainSet.version));
}

export async function listTargetOptions(db: Db, { organisationId, modelId }: { organisationId: string; modelId: string }) {
  const rows = await db
    .select({ machineId: machine.id, serial: machine.serial, siteId: site.id, siteName: site.name, customerId: customer.id, customerName: customer.name })
    .from(machine)
    .innerJoin(site, and(eq(site.organisationId, machine.organisationId), eq(site.id, machine.siteId)))
    .innerJoin(customer, and(eq(customer.organisationId, site.organisationId), eq(customer.id, site.customerId)))
    .where(and(eq(machine.organisationId, organisationId), eq(machine.modelId, modelId), eq(machine.status, "active")))
    .orderBy(asc(customer.name), asc(site.name), asc(machine.serial));
  const customers = new Map<string, string>();
  const sites = new Map<string, { id: string; name: string; customerName: string }>();
  for (const r of rows) {
    customers.set(r.customerId, r.customerName);
    sites.set(r.siteId, { id: r.siteId, name: r.siteName, customerName: r.customerName });
  }
  return {
    customers: [...customers].map(([id, name]) => ({ id, name })),
    sites: [...sites.values()],
    machines: rows.map((r) => ({ id: r.machineId, serial: r.serial, siteName: r.siteName, customerName: r.customerName })),
  };
}
