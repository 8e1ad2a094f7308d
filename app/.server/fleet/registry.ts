// Customers, sites, machine models and loop templates of one organisation.
//
// Counts are correlated subqueries with the outer table named in full ("customer"."id"):
// drizzle renders a column interpolated into a select field without its table, which inside
// the subquery would resolve to the subquery's own table.
import { DomainError } from "~/lib/errors";
import { and, asc, count, eq, inArray, sql, type SQL } from "drizzle-orm";
import type { z } from "zod";
import type { CustomerInputSchema, SiteInputSchema } from "~/lib/fleet/schemas";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { customer, loopTemplate, machine, machineModel, site } from "~/.server/db/schema";

import type { SiteScope } from "./scope";

export type Page = { page: number; pageSize: number };

export async function listCustomers(db: Db, scope: SiteScope, { page, pageSize }: Page) {
  const where: SQL[] = [eq(customer.organisationId, scope.organisationId)];
  if (scope.siteIds !== null) {
    if (scope.siteIds.length === 0) return { items: [], total: 0, page, pageSize };
    where.push(
      inArray(
        customer.id,
        db.select({ id: site.customerId }).from(site).where(and(eq(site.organisationId, scope.organisationId), inArray(site.id, scope.siteIds))),
      ),
    );
  }
  const [{ total }] = await db.select({ total: count() }).from(customer).where(and(...where));
  const items = await db
    .select({
      id: customer.id,
      name: customer.name,
      createdAt: customer.createdAt,
      // A site manager counts only the sites assigned to them.
      siteCount: sql<number>`(select count(*)::int from ${site} s where s.organisation_id = "customer"."organisation_id" and s.customer_id = "customer"."id"${
        scope.siteIds === null ? sql`` : sql` and s.id in (${sql.join(scope.siteIds.map((id) => sql`${id}::uuid`), sql`, `)})`
      })`,
    })
    .from(customer)
    .where(and(...where))
    .orderBy(asc(customer.name))
    .limit(pageSize)
    .offset((page - 1) * pageSize);
  return { items, total, page, pageSize };
}

export async function listSites(db: Db, scope: SiteScope, { page, pageSize, customerId }: Page & { customerId?: string }) {
  const where: SQL[] = [eq(site.organisationId, scope.organisationId)];
  if (customerId) where.push(eq(site.customerId, customerId));
  if (scope.siteIds !== null) {
    if (scope.siteIds.length === 0) return { items: [], total: 0, page, pageSize };
    where.push(inArray(site.id, scope.siteIds));
  }
  const [{ total }] = await db.select({ total: count() }).from(site).where(and(...where));
  const items = await db
    .select({
      id: site.id,
      name: site.name,
      customerId: site.customerId,
      customerName: customer.name,
      timeZone: site.timeZone,
      machineCount: sql<number>`(select count(*)::int from ${machine} m where m.organisation_id = "site"."organisation_id" and m.site_id = "site"."id")`,
    })
    .from(site)
    .innerJoin(customer, and(eq(customer.organisationId, site.organisationId), eq(customer.id, site.customerId)))
    .where(and(...where))
    .orderBy(asc(customer.name), asc(site.name))
    .limit(pageSize)
    .offset((page - 1) * pageSize);
  return { items, total, page, pageSize };
}

export async function addCustomer(db: Db, { organisationId, actor, input }: { organisationId: string; actor: string; input: z.infer<typeof CustomerInputSchema> }) {
  const [row] = await db.insert(customer).values({ organisationId, name: input.name }).onConflictDoNothing().returning();
  if (!row) throw new DomainError("customer_exists", "A customer of this name already exists.", { status: 409 });
  await recordAudit(db, { organisationId, actor, action: "customer.created", targetType: "customer", targetId: row.id, detail: { name: row.name } });
  return row;
}

export async function addSite(db: Db, { organisationId, actor, input }: { organisationId: string; actor: string; input: z.infer<typeof SiteInputSchema> }) {
  const [owner] = await db.select({ id: customer.id }).from(customer).where(and(eq(customer.organisationId, organisationId), eq(customer.id, input.customerId)));
  if (!owner) throw new DomainError("unknown_customer", "No such customer.", { status: 400 });
  const [row] = await db.insert(site).values({ organisationId, ...input }).onConflictDoNothing().returning();
  if (!row) throw new DomainError("site_exists", "This customer already has a site of this name.", { status: 409 });
  await recordAudit(db, { organisationId, actor, action: "site.created", targetType: "site", targetId: row.id, detail: { name: row.name, timeZone: row.timeZone } });
  return row;
}

/** What a loop shows of its template wherever it is listed (models here, a machine's loops in machines.ts). */
export const templateDescriptionColumns = {
  name: loopTemplate.name,
  unit: loopTemplate.unit,
  outputUnit: loopTemplate.outputUnit,
  samplePeriodS: loopTemplate.samplePeriodS,
  controllerForm: loopTemplate.controllerForm,
  outputMin: loopTemplate.outputMin,
  outputMax: loopTemplate.outputMax,
};

const templateColumns = {
  id: loopTemplate.id,
  modelId: loopTemplate.modelId,
  key: loopTemplate.key,
  ...templateDescriptionColumns,
  defaultGains: loopTemplate.defaultGains,
  gainEnvelope: loopTemplate.gainEnvelope,
  thresholds: loopTemplate.thresholds,
  position: loopTemplate.position,
};

export async function listModels(db: Db, { organisationId, page, pageSize }: { organisationId: string } & Page) {
  const [{ total }] = await db.select({ total: count() }).from(machineModel).where(eq(machineModel.organisationId, organisationId));
  const models = await db
    .select({
      id: machineModel.id,
      name: machineModel.name,
      description: machineModel.description,
      machineCount: sql<number>`(select count(*)::int from ${machine} m where m.organisation_id = "machine_model"."organisation_id" and m.model_id = "machine_model"."id")`,
    })
    .from(machineModel)
    .where(eq(machineModel.organisationId, organisationId))
    .orderBy(asc(machineModel.name))
    .limit(pageSize)
    .offset((page - 1) * pageSize);
  const templates = models.length
    ? await db
        .select(templateColumns)
        .from(loopTemplate)
        .where(and(eq(loopTemplate.organisationId, organisationId), inArray(loopTemplate.modelId, models.map((m) => m.id))))
        .orderBy(asc(loopTemplate.position), asc(loopTemplate.key))
    : [];
  const items = models.map((m) => ({ ...m, loopTemplates: templates.filter((t) => t.modelId === m.id) }));
  return { items, total, page, pageSize };
}

export async function listTemplatesOfModel(db: Db, { organisationId, modelId }: { organisationId: string; modelId: string }) {
  return db
    .select(templateColumns)
    .from(loopTemplate)
    .where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.modelId, modelId)))
    .orderBy(asc(loopTemplate.position), asc(loopTemplate.key));
}

/** Names of sites, customers and models for filters and forms. */
export async function listRegistryOptions(db: Db, scope: SiteScope) {
  const siteWhere: SQL[] = [eq(site.organisationId, scope.organisationId)];
  if (scope.siteIds !== null) siteWhere.push(scope.siteIds.length ? inArray(site.id, scope.siteIds) : sql`false`);
  const sites = await db
    .select({ id: site.id, name: site.name, customerId: site.customerId, customerName: customer.name, timeZone: site.timeZone })
    .from(site)
    .innerJoin(customer, and(eq(customer.organisationId, site.organisationId), eq(customer.id, site.customerId)))
    .where(and(...siteWhere))
    .orderBy(asc(customer.name), asc(site.name));
  const customers = [...new Map(sites.map((s) => [s.customerId, { id: s.customerId, name: s.customerName }])).values()];
  // A site manager's filters name only the models their sites run.
  const modelWhere: SQL[] = [eq(machineModel.organisationId, scope.organisationId)];
  if (scope.siteIds !== null) {
    modelWhere.push(
      inArray(
        machineModel.id,
        db
          .select({ id: machine.modelId })
          .from(machine)
          .where(and(eq(machine.organisationId, scope.organisationId), scope.siteIds.length ? inArray(machine.siteId, scope.siteIds) : sql`false`)),
      ),
    );
  }
  const models = await db
    .select({ id: machineModel.id, name: machineModel.name })
    .from(machineModel)
    .where(and(...modelWhere))
    .orderBy(asc(machineModel.name));
  return { sites, customers, models };
}
