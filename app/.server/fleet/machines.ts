// Machines and their loops: registration (loops from the model's templates), listing with
// server-side filters, sorting and pagination, the detail view, decommissioning, and the
// device side of enrolment (codes, revocation).
import { DomainError } from "~/lib/errors";
import { and, asc, desc, eq, isNull, sql, type SQL } from "drizzle-orm";
import { z } from "zod";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { customer, device, enrolmentCode, loop, loopTemplate, machine, machineModel, site } from "~/.server/db/schema";
import { MACHINE_STATUSES, type MachineListQuery, type MachineSort, type RegisterMachineInput } from "~/lib/fleet/schemas";
import { BAND_RANK, bandOfRank, DEFAULT_SILENT_AFTER_S, isSilent, silentAssessment, type HealthBand } from "~/lib/health";
import { issueEnrolmentCode } from "./enrolment-codes";
import { templateDescriptionColumns } from "./registry";
import { inScope, type SiteScope } from "./scope";

// Rank of each loop's band, in SQL so lists can filter and sort by it: the silence rule and the
// ranks are lib/health's (isSilent, BAND_RANK), written out here for PostgreSQL.
const LOOP_RANK = sql`case
  when l.last_digest_at is null or l.last_digest_at < now() - make_interval(secs => coalesce((t.thresholds->>'silentAfter')::float8, ${DEFAULT_SILENT_AFTER_S}::float8)) then ${BAND_RANK.silent}::int
  ${sql.join((["act", "watch", "steady"] as const).map((band) => sql`when l.health_band = ${band} then ${BAND_RANK[band]}::int`), sql` `)}
  else ${BAND_RANK.silent}::int end`;

type MachineRow = {
  id: string;
  serial: string;
  status: string;
  firmware: string | null;
  last_seen_at: Date | string | null;
  created_at: Date | string;
  model_id: string;
  model_name: string;
  site_id: string;
  site_name: string;
  time_zone: string;
  customer_id: string;
  customer_name: string;
  loop_count: number;
  health_rank: number | null;
  health_score: number | null;
  device_status: string | null;
  total: number;
};

function toIso(value: Date | string | null): string | null {
  if (value === null) return null;
  return (value instanceof Date ? value : new Date(value)).toISOString();
}

function mapMachine(row: MachineRow) {
  return {
    id: row.id,
    serial: row.serial,
    status: row.status as (typeof MACHINE_STATUSES)[number],
    firmware: row.firmware,
    lastSeenAt: toIso(row.last_seen_at),
    createdAt: toIso(row.created_at)!,
    model: { id: row.model_id, name: row.model_name },
    site: { id: row.site_id, name: row.site_name, timeZone: row.time_zone },
    customer: { id: row.customer_id, name: row.customer_name },
    loopCount: Number(row.loop_count),
    health: { band: bandOfRank(row.health_rank ?? BAND_RANK.silent), score: row.health_score === null ? null : Number(row.health_score) },
    enrolment: row.device_status === "active" ? ("enrolled" as const) : row.device_status === "revoked" ? ("revoked" as const) : ("not_enrolled" as const),
  };
}
export type MachineSummary = ReturnType<typeof mapMachine>;

const SORT_SQL: Record<MachineSort, SQL> = {
  serial: sql`m.serial`,
  model: sql`mm.name`,
  site: sql`s.name`,
  customer: sql`c.name`,
  health: sql`coalesce(h.health_rank, 3)`,
  lastSeen: sql`m.last_seen_at`,
  firmware: sql`m.firmware`,
  status: sql`m.status`,
};

function machineSelect(where: SQL, order: SQL, limit: number, offset: number) {
  return sql`
    select m.id, m.serial, m.status, m.firmware, m.last_seen_at, m.created_at,
           mm.id as model_id, mm.name as model_name, s.id as site_id, s.name as site_name, s.time_zone,
           c.id as customer_id, c.name as customer_name,
           coalesce(h.loop_count, 0)::int as loop_count, h.health_rank, h.health_score,
           (select d.status from ${device} d where d.organisation_id = m.organisation_id and d.machine_id = m.id
              order by (d.status = 'active') desc, d.enrolled_at desc limit 1) as device_status,
           count(*) over ()::int as total
    from ${machine} m
    join ${machineModel} mm on mm.organisation_id = m.organisation_id and mm.id = m.model_id
    join ${site} s on s.organisation_id = m.organisation_id and s.id = m.site_id
    join ${customer} c on c.organisation_id = s.organisation_id and c.id = s.customer_id
    left join lateral (
      select count(*)::int as loop_count, max(${LOOP_RANK})::int as health_rank,
             min(case when ${LOOP_RANK} < ${BAND_RANK.silent}::int then l.health_score end)::int as health_score
      from ${loop} l join ${loopTemplate} t on t.organisation_id = l.organisation_id and t.id = l.template_id
      where l.organisation_id = m.organisation_id and l.machine_id = m.id
    ) h on true
    where ${where}
    order by ${order}
    limit ${limit} offset ${offset}`;
}

function scopeWhere(scope: SiteScope): SQL[] {
  const where: SQL[] = [sql`m.organisation_id = ${scope.organisationId}`];
  if (scope.siteIds !== null) {
    where.push(scope.siteIds.length ? sql`m.site_id in (${sql.join(scope.siteIds.map((id) => sql`${id}::uuid`), sql`, `)})` : sql`false`);
  }
  return where;
}

export async function listMachines(db: Db, scope: SiteScope, query: MachineListQuery) {
  const where = scopeWhere(scope);
  if (query.customerId) where.push(sql`s.customer_id = ${query.customerId}::uuid`);
  if (query.siteId) where.push(sql`m.site_id = ${query.siteId}::uuid`);
  if (query.modelId) where.push(sql`m.model_id = ${query.modelId}::uuid`);
  if (query.status) where.push(sql`m.status = ${query.status}`);
  if (query.health) where.push(sql`coalesce(h.health_rank, ${BAND_RANK.silent}::int) = ${BAND_RANK[query.health]}::int`);
  if (query.q) {
    const pattern = `%${query.q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
    where.push(sql`(m.serial ilike ${pattern} or coalesce(m.firmware, '') ilike ${pattern} or s.name ilike ${pattern} or c.name ilike ${pattern})`);
  }
  const dir = query.dir === "desc" ? sql`desc nulls last` : sql`asc nulls last`;
  const order = sql`${SORT_SQL[query.sort]} ${dir}, m.serial asc, m.id asc`;
  const result = await db.execute<MachineRow>(machineSelect(sql.join(where, sql` and `), order, query.pageSize, (query.page - 1) * query.pageSize));
  const rows = result.rows;
  let total = rows[0]?.total ?? 0;
  if (rows.length === 0 && query.page > 1) {
    // Past the last page: still say how many there are.
    const countResult = await db.execute<MachineRow>(machineSelect(sql.join(where, sql` and `), order, 1, 0));
    total = countResult.rows[0]?.total ?? 0;
  }
  return { items: rows.map(mapMachine), total: Number(total), page: query.page, pageSize: query.pageSize };
}

/** One machine with its loops, or null when it is not in this scope. */
export async function getMachine(db: Db, scope: SiteScope, machineId: string) {
  if (!z.uuid().safeParse(machineId).success) return null;
  const where = [...scopeWhere(scope), sql`m.id = ${machineId}::uuid`];
  const result = await db.execute<MachineRow>(machineSelect(sql.join(where, sql` and `), sql`m.serial`, 1, 0));
  const row = result.rows[0];
  if (!row) return null;
  const loops = await db
    .select({
      id: loop.id,
      key: loop.key,
      ...templateDescriptionColumns,
      thresholds: loopTemplate.thresholds,
      gains: loop.gains,
      configVersion: loop.configVersion,
      appliedVersion: loop.appliedVersion,
      ackStatus: loop.ackStatus,
      ackReason: loop.ackReason,
      ackedAt: loop.ackedAt,
      healthBand: loop.healthBand,
      healthScore: loop.healthScore,
      healthReasons: loop.healthReasons,
      lastDigestAt: loop.lastDigestAt,
    })
    .from(loop)
    .innerJoin(loopTemplate, and(eq(loopTemplate.organisationId, loop.organisationId), eq(loopTemplate.id, loop.templateId)))
    .where(and(eq(loop.organisationId, scope.organisationId), eq(loop.machineId, machineId)))
    .orderBy(asc(loopTemplate.position), asc(loop.key));
  const now = Date.now();
  const devices = await db
    .select({ id: device.id, alg: device.alg, status: device.status, firmware: device.firmware, enrolledAt: device.enrolledAt, revokedAt: device.revokedAt, thumbprint: device.thumbprint })
    .from(device)
    .where(and(eq(device.organisationId, scope.organisationId), eq(device.machineId, machineId)))
    .orderBy(desc(device.enrolledAt));
  const [pendingCode] = await db
    .select({ expiresAt: enrolmentCode.expiresAt })
    .from(enrolmentCode)
    .where(and(eq(enrolmentCode.organisationId, scope.organisationId), eq(enrolmentCode.machineId, machineId), isNull(enrolmentCode.usedAt), isNull(enrolmentCode.supersededAt)))
    .orderBy(desc(enrolmentCode.createdAt))
    .limit(1);
  return {
    ...mapMachine(row),
    loops: loops.map((l) => {
      const silent = isSilent(l.lastDigestAt, l.thresholds.silentAfter, new Date(now));
      const { thresholds, ...rest } = l;
      return {
        ...rest,
        thresholds,
        ackedAt: l.ackedAt?.toISOString() ?? null,
        lastDigestAt: l.lastDigestAt?.toISOString() ?? null,
        health: silent ? silentAssessment(l.lastDigestAt) : { band: (l.healthBand ?? "silent") as HealthBand, score: l.healthScore, reasons: l.healthReasons },
      };
    }),
    devices: devices.map((d) => ({ ...d, enrolledAt: d.enrolledAt.toISOString(), revokedAt: d.revokedAt?.toISOString() ?? null })),
    pendingEnrolmentCode: pendingCode && pendingCode.expiresAt.getTime() > now ? { expiresAt: pendingCode.expiresAt.toISOString() } : null,
  };
}
export type MachineDetail = NonNullable<Awaited<ReturnType<typeof getMachine>>>;

/** Register a machine, create its loops from the model's templates and issue an enrolment code. */
export async function registerMachine(db: Db, { organisationId, actor, input }: { organisationId: string; actor: string; input: RegisterMachineInput }) {
  const [model] = await db.select({ id: machineModel.id }).from(machineModel).where(and(eq(machineModel.organisationId, organisationId), eq(machineModel.id, input.modelId)));
  if (!model) throw new DomainError("unknown_model", "No such machine model.", { status: 400, issues: [{ path: ["modelId"], message: "No such machine model." }] });
  const [target] = await db.select({ id: site.id }).from(site).where(and(eq(site.organisationId, organisationId), eq(site.id, input.siteId)));
  if (!target) throw new DomainError("unknown_site", "No such site.", { status: 400, issues: [{ path: ["siteId"], message: "No such site." }] });
  const [created] = await db
    .insert(machine)
    .values({ organisationId, serial: input.serial, modelId: input.modelId, siteId: input.siteId, firmware: input.firmware ?? null })
    .onConflictDoNothing()
    .returning();
  if (!created) throw new DomainError("serial_taken", `A machine with serial ${input.serial} is already registered.`, { status: 409, issues: [{ path: ["serial"], message: "This serial is already registered." }] });
  const templates = await db
    .select({ id: loopTemplate.id, key: loopTemplate.key, defaultGains: loopTemplate.defaultGains })
    .from(loopTemplate)
    .where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.modelId, input.modelId)));
  if (templates.length) {
    await db.insert(loop).values(templates.map((t) => ({ organisationId, machineId: created.id, templateId: t.id, key: t.key, gains: t.defaultGains })));
  }
  const code = await issueEnrolmentCode(db, { organisationId, machineId: created.id, actor });
  await recordAudit(db, { organisationId, actor, action: "machine.registered", targetType: "machine", targetId: created.id, detail: { serial: created.serial, modelId: input.modelId, siteId: input.siteId }, after: { serial: created.serial, modelId: input.modelId, siteId: input.siteId, status: "active" } });
  return { machine: created, enrolmentCode: code };
}

async function requireMachineInScope(db: Db, scope: SiteScope, machineId: string) {
  if (!z.uuid().safeParse(machineId).success) throw new DomainError("not_found", "No such machine.", { status: 404 });
  const [row] = await db
    .select({ id: machine.id, siteId: machine.siteId, status: machine.status, serial: machine.serial })
    .from(machine)
    .where(and(eq(machine.organisationId, scope.organisationId), eq(machine.id, machineId)));
  if (!row || !inScope(scope, row.siteId)) throw new DomainError("not_found", "No such machine.", { status: 404 });
  return row;
}

export async function regenerateEnrolmentCode(db: Db, scope: SiteScope, { machineId, actor }: { machineId: string; actor: string }) {
  const target = await requireMachineInScope(db, scope, machineId);
  if (target.status !== "active") throw new DomainError("decommissioned", "This machine is decommissioned.", { status: 409 });
  const code = await issueEnrolmentCode(db, { organisationId: scope.organisationId, machineId, actor });
  await recordAudit(db, { organisationId: scope.organisationId, actor, action: "machine.enrolment_code_issued", targetType: "machine", targetId: machineId, detail: { serial: target.serial, expiresAt: code.expiresAt.toISOString() } });
  return code;
}

export async function revokeMachineDevice(db: Db, scope: SiteScope, { machineId, actor }: { machineId: string; actor: string }) {
  const target = await requireMachineInScope(db, scope, machineId);
  const revoked = await db
    .update(device)
    .set({ status: "revoked", revokedAt: new Date() })
    .where(and(eq(device.organisationId, scope.organisationId), eq(device.machineId, machineId), eq(device.status, "active")))
    .returning({ id: device.id });
  await recordAudit(db, { organisationId: scope.organisationId, actor, action: "machine.device_revoked", targetType: "machine", targetId: machineId, detail: { serial: target.serial, deviceIds: revoked.map((d) => d.id) }, before: { activeDevices: revoked.map((d) => d.id) }, after: { activeDevices: [] } });
  return { revoked: revoked.length };
}

export async function decommissionMachine(db: Db, scope: SiteScope, { machineId, actor }: { machineId: string; actor: string }) {
  const target = await requireMachineInScope(db, scope, machineId);
  if (target.status === "decommissioned") return { changed: false };
  const now = new Date();
  await db.update(machine).set({ status: "decommissioned", decommissionedAt: now }).where(and(eq(machine.organisationId, scope.organisationId), eq(machine.id, machineId)));
  await db.update(device).set({ status: "revoked", revokedAt: now }).where(and(eq(device.organisationId, scope.organisationId), eq(device.machineId, machineId), eq(device.status, "active")));
  await db.update(enrolmentCode).set({ supersededAt: now }).where(and(eq(enrolmentCode.organisationId, scope.organisationId), eq(enrolmentCode.machineId, machineId), isNull(enrolmentCode.usedAt), isNull(enrolmentCode.supersededAt)));
  await recordAudit(db, { organisationId: scope.organisationId, actor, action: "machine.decommissioned", targetType: "machine", targetId: machineId, detail: { serial: target.serial }, before: { status: "active" }, after: { status: "decommissioned" } });
  return { changed: true };
}
