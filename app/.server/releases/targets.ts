// Which machines and loops a release reaches, and what they run now (the preview).
import { and, asc, eq, inArray, or, type SQL } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { customer, gainSet, loop, loopTemplate, machine, site } from "~/.server/db/schema";
import { DomainError } from "~/lib/errors";
import type { ReleaseTargetSpec } from "~/lib/release/types";

export type TargetLoop = {
  machineId: string;
  serial: string;
  siteName: string;
  customerName: string;
  loopId: string;
  loopKey: string;
  configVersion: number;
  appliedVersion: number | null;
  gains: { kp: number; ki: number; kd: number };
  gainSetId: string | null;
};

/** The approved-or-not gain set and its template, or 404. */
export async function requireGainSetForRelease(db: Db, { organisationId, gainSetId }: { organisationId: string; gainSetId: string }) {
  const [row] = await db
    .select({ id: gainSet.id, state: gainSet.state, version: gainSet.version, gains: gainSet.gains, loopTemplateId: gainSet.loopTemplateId, modelId: loopTemplate.modelId, templateKey: loopTemplate.key, templateName: loopTemplate.name })
    .from(gainSet)
    .innerJoin(loopTemplate, and(eq(loopTemplate.organisationId, gainSet.organisationId), eq(loopTemplate.id, gainSet.loopTemplateId)))
    .where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, gainSetId)));
  if (!row) throw new DomainError("not_found", "No such gain set.", { status: 404, field: "gainSetId" });
  return row;
}

/**
 * The loops of `loopTemplateId` on the active machines the spec names (all of the model, or
 * chosen customers, sites, machines). Ids that are not machines, sites or customers of this
 * organisation (or not of the template's model) are refused, naming them.
 */
export async function resolveTargetLoops(db: Db, { organisationId, loopTemplateId, modelId, target }: { organisationId: string; loopTemplateId: string; modelId: string; target: ReleaseTargetSpec }): Promise<TargetLoop[]> {
  const machineIds = [...new Set(target.machineIds ?? [])];
  const siteIds = [...new Set(target.siteIds ?? [])];
  const customerIds = [...new Set(target.customerIds ?? [])];
  if (!target.all) {
    await requireKnown(db, organisationId, machineIds, siteIds, customerIds, modelId);
  }
  const filters: SQL[] = [];
  if (!target.all) {
    if (machineIds.length) filters.push(inArray(machine.id, machineIds));
    if (siteIds.length) filters.push(inArray(machine.siteId, siteIds));
    if (customerIds.length) filters.push(inArray(site.customerId, customerIds));
  }
  return db
    .select({
      machineId: machine.id,
      serial: machine.serial,
      siteName: site.name,
      customerName: customer.name,
      loopId: loop.id,
      loopKey: loop.key,
      configVersion: loop.configVersion,
      appliedVersion: loop.appliedVersion,
      gains: loop.gains,
      gainSetId: loop.gainSetId,
    })
    .from(loop)
    .innerJoin(machine, and(eq(machine.organisationId, loop.organisationId), eq(machine.id, loop.machineId)))
    .innerJoin(site, and(eq(site.organisationId, machine.organisationId), eq(site.id, machine.siteId)))
    .innerJoin(customer, and(eq(customer.organisationId, site.organisationId), eq(customer.id, site.customerId)))
    .where(and(eq(loop.organisationId, organisationId), eq(loop.templateId, loopTemplateId), eq(machine.modelId, modelId), eq(machine.status, "active"), filters.length ? or(...filters) : undefined))
    .orderBy(asc(machine.serial), asc(loop.key));
}

async function requireKnown(db: Db, organisationId: string, machineIds: string[], siteIds: string[], customerIds: string[], modelId: string) {
  const unknown: { path: string[]; message: string }[] = [];
  if (machineIds.length) {
    const found = await db.select({ id: machine.id }).from(machine).where(and(eq(machine.organisationId, organisationId), inArray(machine.id, machineIds), eq(machine.modelId, modelId), eq(machine.status, "active")));
    const ok = new Set(found.map((r) => r.id));
    machineIds.forEach((id, i) => ok.has(id) || unknown.push({ path: ["target", "machineIds", String(i)], message: `No active machine ${id} of this gain set's model.` }));
  }
  if (siteIds.length) {
    const found = await db.select({ id: site.id }).from(site).where(and(eq(site.organisationId, organisationId), inArray(site.id, siteIds)));
    const ok = new Set(found.map((r) => r.id));
    siteIds.forEach((id, i) => ok.has(id) || unknown.push({ path: ["target", "siteIds", String(i)], message: `No site ${id}.` }));
  }
  if (customerIds.length) {
    const found = await db.select({ id: customer.id }).from(customer).where(and(eq(customer.organisationId, organisationId), inArray(customer.id, customerIds)));
    const ok = new Set(found.map((r) => r.id));
    customerIds.forEach((id, i) => ok.has(id) || unknown.push({ path: ["target", "customerIds", String(i)], message: `No customer ${id}.` }));
  }
  if (unknown.length) throw new DomainError("invalid_target", unknown[0].message, { status: 400, issues: unknown });
}

/** Machines with their loops, for the preview. */
export function groupByMachine(loops: TargetLoop[]) {
  const machines = new Map<string, { machineId: string; serial: string; siteName: string; customerName: string; loops: { loopId: string; loopKey: string; configVersion: number; appliedVersion: number | null; gains: TargetLoop["gains"]; gainSetId: string | null }[] }>();
  for (const l of loops) {
    let m = machines.get(l.machineId);
    if (!m) machines.set(l.machineId, (m = { machineId: l.machineId, serial: l.serial, siteName: l.siteName, customerName: l.customerName, loops: [] }));
    m.loops.push({ loopId: l.loopId, loopKey: l.loopKey, configVersion: l.configVersion, appliedVersion: l.appliedVersion, gains: l.gains, gainSetId: l.gainSetId });
  }
  return [...machines.values()];
}

