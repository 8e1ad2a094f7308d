// Gain sets: drafts saved from the tuning bench or the API, proposed (after the checks in
// app/lib/gain-sets/checks.ts), approved or rejected by a second member, then released and
// retired by releases. Every transition is one transaction that locks the gain set, writes a
// history row and an audit event; a refused request changes nothing. A gain set's parameters
// never change after draft (a trigger refuses it too): a change is a new version.
import { and, asc, count, desc, eq, sql, type SQL } from "drizzle-orm";
import { z } from "zod";
import { describeActors } from "~/.server/audit/actors";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { gainSet, gainSetHistory, loopTemplate, machineModel, type GainSetOrigin } from "~/.server/db/schema";
import type { Role } from "~/lib/access/capabilities";
import { checkGainSigns, toParallelGains } from "~/lib/control";
import { DomainError } from "~/lib/errors";
import { checkGainSet, computeGainSetMargins } from "~/lib/gain-sets/checks";
import type { CreateGainSetInput, GainSetListQuery } from "~/lib/gain-sets/schemas";
import type { EnteredGains, GainSetAntiWindup, GainSetChecks, GainSetMargins, GainSetState } from "~/lib/gain-sets/types";

/** Loop templates the bench can save for, with what the page needs to show them. */
export async function listBenchTemplates(db: Db, { organisationId }: { organisationId: string }) {
  const rows = await db
    .select({
      id: loopTemplate.id,
      key: loopTemplate.key,
      name: loopTemplate.name,
      unit: loopTemplate.unit,
      outputUnit: loopTemplate.outputUnit,
      samplePeriodS: loopTemplate.samplePeriodS,
      outputMin: loopTemplate.outputMin,
      outputMax: loopTemplate.outputMax,
      envelope: loopTemplate.gainEnvelope,
      modelName: machineModel.name,
      drafts: sql<number>`(select count(*)::int from gain_set g where g.organisation_id = "loop_template"."organisation_id" and g.loop_template_id = "loop_template"."id")`,
    })
    .from(loopTemplate)
    .innerJoin(machineModel, and(eq(machineModel.organisationId, loopTemplate.organisationId), eq(machineModel.id, loopTemplate.modelId)))
    .where(eq(loopTemplate.organisationId, organisationId))
    .orderBy(asc(machineModel.name), asc(loopTemplate.position), asc(loopTemplate.key));
  return rows;
}

const finite = z.number().refine(Number.isFinite, "must be a finite number");

/** What the bench sends when it saves its gains (a form field holding this JSON). */
export const DraftGainSetSchema = z.strictObject({
  templateId: z.uuid("Choose a loop template."),
  gains: z.discriminatedUnion("form", [
    z
      .strictObject({ form: z.literal("parallel"), kp: finite, ki: finite, kd: finite })
      .superRefine((gains, ctx) => {
        const wrong = checkGainSigns(gains);
        if (wrong) ctx.addIssue({ code: "custom", path: [wrong.field], message: wrong.message });
      }),
    z.strictObject({ form: z.literal("standard"), kc: finite, ti: finite.refine((v) => v > 0, "must be above 0").nullable(), td: finite.refine((v) => v >= 0, "must not be negative") }),
  ]),
  filterN: finite.refine((v) => v > 0 && v <= 1000, "must be between 0 and 1000").nullable().optional(),
  origin: z
    .strictObject({
      rule: z.string().max(40).nullable(),
      controller: z.string().max(8).nullable(),
      model: z.strictObject({ gain: finite, timeConstant: finite, deadTime: finite }).nullable(),
      figures: z.record(z.string().max(40), finite.nullable()).refine((r) => Object.keys(r).length <= 20, "has too many entries"),
    })
    .optional(),
  note: z.string().trim().max(500, "Use at most 500 characters.").default(""),
});
export type DraftGainSetInput = z.infer<typeof DraftGainSetSchema>;

const round = (value: number) => Number(value.toPrecision(12));
const NO_ORIGIN: GainSetOrigin = { rule: null, controller: null, model: null, figures: {} };

type Scope = { organisationId: string };
type GainSetRow = typeof gainSet.$inferSelect;
type TemplateRow = typeof loopTemplate.$inferSelect;

function notFound(): DomainError {
  return new DomainError("not_found", "No such gain set in this organisation.", { status: 404 });
}

/** The fields that describe a gain set in the audit log's before/after. */
function auditView(row: GainSetRow): Record<string, unknown> {
  return {
    version: row.version,
    state: row.state,
    form: row.form,
    enteredGains: row.enteredGains,
    gains: row.gains,
    filterN: row.filterN,
    setpointWeight: row.setpointWeight,
    antiWindup: row.antiWindup,
    trackingTimeS: row.trackingTimeS,
    outputMin: row.outputMin,
    outputMax: row.outputMax,
    integratorMin: row.integratorMin,
    integratorMax: row.integratorMax,
    samplePeriodS: row.samplePeriodS,
    note: row.note,
  };
}

const stateView = (row: Pick<GainSetRow, "state" | "version">) => ({ state: row.state, version: row.version });

async function lockTemplate(tx: Db, organisationId: string, templateId: string): Promise<TemplateRow> {
  const [template] = await tx
    .select()
    .from(loopTemplate)
    .where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.id, templateId)))
    .for("update")
    .limit(1);
  if (!template) throw new DomainError("not_found", "No such loop template in this organisation.", { status: 404, field: "loopTemplateId" });
  return template;
}

async function lockGainSet(tx: Db, organisationId: string, id: string): Promise<GainSetRow> {
  if (!z.uuid().safeParse(id).success) throw notFound();
  const [row] = await tx
    .select()
    .from(gainSet)
    .where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, id)))
    .for("update")
    .limit(1);
  if (!row) throw notFound();
  return row;
}

/** Output and integrator limits and period a row stands for (old rows: the template's). */
export function resolveLimits(row: GainSetRow, template: Pick<TemplateRow, "outputMin" | "outputMax" | "samplePeriodS">) {
  const outputMin = row.outputMin ?? template.outputMin;
  const outputMax = row.outputMax ?? template.outputMax;
  return {
    outputMin,
    outputMax,
    integratorMin: row.integratorMin ?? outputMin,
    integratorMax: row.integratorMax ?? outputMax,
    samplePeriodS: row.samplePeriodS ?? template.samplePeriodS,
  };
}

function runChecks(row: GainSetRow, template: TemplateRow): GainSetChecks {
  return checkGainSet(
    {
      gains: row.gains,
      entered: row.enteredGains ?? undefined,
      filterN: row.filterN,
      setpointWeight: row.setpointWeight,
      trackingTimeS: row.trackingTimeS,
      ...resolveLimits(row, template),
    },
    {
      key: template.key,
      envelope: template.gainEnvelope,
      outputMin: template.outputMin,
      outputMax: template.outputMax,
      referenceModel: template.referenceModel,
      minGainMargin: template.minGainMargin,
      minPhaseMarginDeg: template.minPhaseMarginDeg,
    },
  );
}

function marginsOn(template: TemplateRow, values: { gains: { kp: number; ki: number; kd: number }; filterN: number | null; samplePeriodS: number }): GainSetMargins | null {
  if (!template.referenceModel) return null;
  try {
    return computeGainSetMargins(values, template.referenceModel);
  } catch {
    return null;
  }
}

export type CreatedGainSet = { id: string; version: number; state: "draft"; templateKey: string; gains: { kp: number; ki: number; kd: number } };

/**
 * A new draft (version = the template's highest + 1). Values outside the envelope are stored:
 * the checks run on proposal, where an admin may override them with a reason.
 */
export async function createGainSet(
  db: Db,
  { organisationId, actor, input, origin = NO_ORIGIN }: Scope & { actor: string; input: CreateGainSetInput; origin?: GainSetOrigin },
): Promise<CreatedGainSet> {
  return db.transaction(async (tx) => {
    // Lock the template row so two saves cannot take the same version number.
    const template = await lockTemplate(tx, organisationId, input.loopTemplateId);
    let basedOn: GainSetRow | null = null;
    if (input.basedOnId) {
      [basedOn] = await tx.select().from(gainSet).where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, input.basedOnId))).limit(1);
      if (!basedOn) throw new DomainError("not_found", "The gain set to revise is not in this organisation.", { status: 404, field: "basedOnId" });
      if (basedOn.loopTemplateId !== template.id) throw new DomainError("invalid_body", "A revision belongs to the same loop template as the set it revises.", { status: 400, field: "basedOnId" });
    }
    const entered = { form: input.form, ...input.gains } as EnteredGains;
    const parallel = toParallelGains(entered.form === "parallel" ? entered : { ...entered, form: "standard" });
    const gains = { kp: round(parallel.kp), ki: round(parallel.ki), kd: round(parallel.kd) };
    const outputMin = input.outputMin ?? template.outputMin;
    const outputMax = input.outputMax ?? template.outputMax;
    const values = {
      form: input.form,
      enteredGains: entered,
      gains,
      filterN: input.filterN ?? null,
      setpointWeight: input.setpointWeight ?? 1,
      antiWindup: (input.antiWindup ?? "clamp") as GainSetAntiWindup,
      trackingTimeS: input.trackingTime ?? null,
      outputMin,
      outputMax,
      integratorMin: input.integratorMin ?? outputMin,
      integratorMax: input.integratorMax ?? outputMax,
      samplePeriodS: template.samplePeriodS,
    };
    const [{ next }] = (await tx
      .select({ next: sql<number>`coalesce(max(${gainSet.version}), 0)::int + 1` })
      .from(gainSet)
      .where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.loopTemplateId, template.id)))) as [{ next: number }];
    const [created] = await tx
      .insert(gainSet)
      .values({
        organisationId,
        loopTemplateId: template.id,
        version: next,
        state: "draft",
        ...values,
        margins: marginsOn(template, values),
        origin,
        note: input.note,
        basedOnId: basedOn?.id ?? null,
        createdBy: actor,
      })
      .returning();
    await tx.insert(gainSetHistory).values({ organisationId, gainSetId: created!.id, state: "draft", actor, comment: basedOn ? `Revision of v${basedOn.version}.` : "", at: sql`clock_timestamp()` });
    await recordAudit(tx, {
      organisationId,
      actor,
      action: "gain_set.drafted",
      targetType: "gain_set",
      targetId: created!.id,
      detail: { template: template.key, version: next, ...(basedOn ? { basedOn: basedOn.id, basedOnVersion: basedOn.version } : {}) },
      after: auditView(created!),
    });
    return { id: created!.id, version: next, state: "draft" as const, templateKey: template.key, gains };
  });
}

/** The bench's save: refuses gains outside the envelope at once (the bench shows why). */
export async function saveDraftGainSet(db: Db, { organisationId, actor, input }: Scope & { actor: string; input: DraftGainSetInput }) {
  const [template] = await db
    .select({ key: loopTemplate.key, envelope: loopTemplate.gainEnvelope })
    .from(loopTemplate)
    .where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.id, input.templateId)))
    .limit(1);
  if (!template) throw new DomainError("invalid_gain_set", "No such loop template in this organisation.", { status: 404, field: "templateId" });
  const parallel = toParallelGains(input.gains);
  for (const name of ["kp", "ki", "kd"] as const) {
    const [min, max] = template.envelope[name];
    const value = round(parallel[name]);
    if (value < min || value > max) {
      throw new DomainError("invalid_gain_set", `${name} = ${value} is outside the safety envelope of ${template.key} (${min} to ${max}).`, { status: 400, field: name });
    }
  }
  const { form, ...gains } = input.gains;
  return createGainSet(db, {
    organisationId,
    actor,
    input: { loopTemplateId: input.templateId, form, gains: gains as CreateGainSetInput["gains"], filterN: input.filterN ?? null, note: input.note },
    origin: input.origin ?? NO_ORIGIN,
  });
}

// ---- Reading ------------------------------------------------------------------------------

export async function listGainSets(db: Db, { organisationId }: Scope, query: GainSetListQuery) {
  const where: SQL[] = [eq(gainSet.organisationId, organisationId)];
  if (query.loopTemplateId) where.push(eq(gainSet.loopTemplateId, query.loopTemplateId));
  if (query.state) where.push(eq(gainSet.state, query.state));
  const condition = and(...where);
  const [rows, [{ total }]] = (await Promise.all([
    db
      .select({
        id: gainSet.id,
        loopTemplateId: gainSet.loopTemplateId,
        templateKey: loopTemplate.key,
        templateName: loopTemplate.name,
        modelName: machineModel.name,
        version: gainSet.version,
        state: gainSet.state,
        form: gainSet.form,
        gains: gainSet.gains,
        margins: gainSet.margins,
        note: gainSet.note,
        createdBy: gainSet.createdBy,
        createdAt: gainSet.createdAt,
        proposedBy: gainSet.proposedBy,
        decidedBy: gainSet.decidedBy,
        decidedAt: gainSet.decidedAt,
      })
      .from(gainSet)
      .innerJoin(loopTemplate, and(eq(loopTemplate.organisationId, gainSet.organisationId), eq(loopTemplate.id, gainSet.loopTemplateId)))
      .innerJoin(machineModel, and(eq(machineModel.organisationId, loopTemplate.organisationId), eq(machineModel.id, loopTemplate.modelId)))
      .where(condition)
      .orderBy(asc(machineModel.name), asc(loopTemplate.position), asc(loopTemplate.key), desc(gainSet.version))
      .limit(query.pageSize)
      .offset((query.page - 1) * query.pageSize),
    db.select({ total: count() }).from(gainSet).where(condition),
  ])) as [Array<Omit<GainSetRow, "organisationId"> & { templateKey: string; templateName: string; modelName: string }>, [{ total: number }]];
  const names = await describeActors(db, { organisationId }, rows.flatMap((r) => [r.createdBy, r.proposedBy, r.decidedBy].filter((v): v is string => !!v)));
  const items = rows.map((r) => ({
    id: r.id,
    loopTemplateId: r.loopTemplateId,
    template: { key: r.templateKey, name: r.templateName, modelName: r.modelName },
    version: r.version,
    state: r.state,
    form: r.form,
    gains: r.gains,
    margins: r.margins,
    note: r.note,
    createdBy: names.get(r.createdBy)?.name ?? null,
    createdAt: r.createdAt.toISOString(),
    proposedBy: r.proposedBy ? (names.get(r.proposedBy)?.name ?? null) : null,
    decidedBy: r.decidedBy ? (names.get(r.decidedBy)?.name ?? null) : null,
    decidedAt: r.decidedAt?.toISOString() ?? null,
  }));
  return { items, total, page: query.page, pageSize: query.pageSize };
}

export type GainSetDetail = NonNullable<Awaited<ReturnType<typeof getGainSet>>>;

/** One gain set with its template, checks (stored on proposal, or a preview for a draft) and history; null when not in this organisation. */
export async function getGainSet(db: Db, { organisationId, id }: Scope & { id: string }) {
  if (!z.uuid().safeParse(id).success) return null;
  const [row] = await db.select().from(gainSet).where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, id))).limit(1);
  if (!row) return null;
  const [template] = await db
    .select({ row: loopTemplate, modelName: machineModel.name })
    .from(loopTemplate)
    .innerJoin(machineModel, and(eq(machineModel.organisationId, loopTemplate.organisationId), eq(machineModel.id, loopTemplate.modelId)))
    .where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.id, row.loopTemplateId)))
    .limit(1);
  const history = await db
    .select({ state: gainSetHistory.state, actor: gainSetHistory.actor, comment: gainSetHistory.comment, at: gainSetHistory.at })
    .from(gainSetHistory)
    .where(and(eq(gainSetHistory.organisationId, organisationId), eq(gainSetHistory.gainSetId, row.id)))
    .orderBy(asc(gainSetHistory.at), asc(gainSetHistory.id));
  const [basedOn] = row.basedOnId
    ? await db.select({ id: gainSet.id, version: gainSet.version }).from(gainSet).where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, row.basedOnId))).limit(1)
    : [];
  const t = template!.row;
  const names = await describeActors(db, { organisationId }, [row.createdBy, row.proposedBy, row.decidedBy, ...history.map((h) => h.actor)].filter((v): v is string => !!v));
  const person = (actorId: string | null) => (actorId ? { id: actorId, name: names.get(actorId)?.name ?? actorId } : null);
  // A draft shows what the checks would say now; from proposal on, what they said then.
  const checks = row.checks ?? (row.state === "draft" ? runChecks(row, t) : null);
  return {
    id: row.id,
    loopTemplateId: row.loopTemplateId,
    template: {
      id: t.id,
      key: t.key,
      name: t.name,
      unit: t.unit,
      outputUnit: t.outputUnit,
      modelName: template!.modelName,
      envelope: t.gainEnvelope,
      referenceModel: t.referenceModel,
      minGainMargin: t.minGainMargin,
      minPhaseMarginDeg: t.minPhaseMarginDeg,
      outputMin: t.outputMin,
      outputMax: t.outputMax,
      samplePeriodS: t.samplePeriodS,
    },
    version: row.version,
    state: row.state,
    form: row.form,
    enteredGains: row.enteredGains ?? ({ form: "parallel", ...row.gains } as EnteredGains),
    gains: row.gains,
    filterN: row.filterN,
    setpointWeight: row.setpointWeight,
    antiWindup: row.antiWindup,
    trackingTime: row.trackingTimeS,
    ...resolveLimits(row, t),
    origin: row.origin,
    margins: row.margins,
    note: row.note,
    basedOn: basedOn ?? null,
    createdBy: person(row.createdBy),
    createdAt: row.createdAt.toISOString(),
    proposedBy: person(row.proposedBy),
    proposedAt: row.proposedAt?.toISOString() ?? null,
    decidedBy: person(row.decidedBy),
    decidedAt: row.decidedAt?.toISOString() ?? null,
    checks,
    overrideReason: row.overrideReason,
    history: history.map((h) => ({ at: h.at.toISOString(), state: h.state, actor: person(h.actor)!, comment: h.comment })),
  };
}

// ---- Transitions --------------------------------------------------------------------------

function requireState(row: GainSetRow, wanted: GainSetState, doing: string): void {
  if (row.state !== wanted) throw new DomainError("invalid_state", `Gain set v${row.version} is ${row.state}; only a ${wanted} gain set can be ${doing}.`, { status: 409 });
}

async function transition(
  tx: Db,
  row: GainSetRow,
  { actor, state, comment, action, set, detail }: { actor: string; state: GainSetState; comment: string; action: string; set: Partial<typeof gainSet.$inferInsert>; detail?: Record<string, unknown> },
): Promise<GainSetRow> {
  const [{ key: templateKey }] = (await tx
    .select({ key: loopTemplate.key })
    .from(loopTemplate)
    .where(and(eq(loopTemplate.organisationId, row.organisationId), eq(loopTemplate.id, row.loopTemplateId)))) as [{ key: string }];
  const [updated] = await tx
    .update(gainSet)
    .set({ state, ...set })
    .where(and(eq(gainSet.organisationId, row.organisationId), eq(gainSet.id, row.id)))
    .returning();
  await tx.insert(gainSetHistory).values({ organisationId: row.organisationId, gainSetId: row.id, state, actor, comment, at: sql`clock_timestamp()` });
  await recordAudit(tx, {
    organisationId: row.organisationId,
    actor,
    action,
    targetType: "gain_set",
    targetId: row.id,
    detail: { version: row.version, template: templateKey, ...(comment ? { comment } : {}), ...detail },
    before: stateView(row),
    after: stateView(updated!),
  });
  return updated!;
}

export type TransitionResult = { id: string; version: number; state: GainSetState };
const result = (row: GainSetRow): TransitionResult => ({ id: row.id, version: row.version, state: row.state });

/**
 * draft → proposed, after the checks. A failed check refuses with 422 `checks_failed` (the
 * failed checks as issues) unless an owner or admin gives a written override reason.
 * `role` is the member's role (null for an API token, which may never override).
 */
export async function proposeGainSet(
  db: Db,
  { organisationId, actor, role, id, override }: Scope & { actor: string; role: Role | null; id: string; override?: { reason: string } },
): Promise<TransitionResult & { checks: GainSetChecks }> {
  return db.transaction(async (tx) => {
    const row = await lockGainSet(tx, organisationId, id);
    requireState(row, "draft", "proposed");
    const [template] = await tx.select().from(loopTemplate).where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.id, row.loopTemplateId))).limit(1);
    const checks = runChecks(row, template!);
    const failed = checks.checks.filter((c) => !c.passed);
    let overrideReason: string | null = null;
    if (failed.length) {
      if (!override) {
        throw new DomainError("checks_failed", `Gain set v${row.version} failed ${failed.length === 1 ? "a check" : `${failed.length} checks`}: ${failed.map((c) => c.message).join(" ")}`, {
          status: 422,
          issues: failed.map((c) => ({ path: [c.name], message: c.message })),
        });
      }
      if (role !== "owner" && role !== "admin") throw new DomainError("forbidden", "Only an owner or admin may override a failed check.", { status: 403 });
      overrideReason = override.reason;
      checks.overridden = { by: actor, reason: override.reason };
      await recordAudit(tx, {
        organisationId,
        actor,
        action: "gain_set.checks_overridden",
        targetType: "gain_set",
        targetId: row.id,
        detail: { version: row.version, template: template!.key, reason: override.reason, failed: failed.map((c) => ({ name: c.name, message: c.message })) },
      });
    }
    const updated = await transition(tx, row, {
      actor,
      state: "proposed",
      comment: overrideReason ? `Checks overridden: ${overrideReason}` : "",
      action: "gain_set.proposed",
      set: { proposedBy: actor, proposedAt: new Date(), checks, overrideReason, margins: checks.margins ?? row.margins },
      detail: { passed: checks.passed },
    });
    return { ...result(updated), checks };
  });
}

/** proposed → approved by a member other than the proposer (403 `own_gain_set`). */
export async function approveGainSet(db: Db, { organisationId, actor, id, comment = "" }: Scope & { actor: string; id: string; comment?: string }): Promise<TransitionResult> {
  return db.transaction(async (tx) => {
    const row = await lockGainSet(tx, organisationId, id);
    requireState(row, "proposed", "approved");
    if (row.proposedBy === actor) throw new DomainError("own_gain_set", "You proposed this gain set: a second member must approve it.", { status: 403 });
    const updated = await transition(tx, row, { actor, state: "approved", comment, action: "gain_set.approved", set: { decidedBy: actor, decidedAt: new Date() } });
    return result(updated);
  });
}

/** proposed → rejected, with the reason (the proposer may withdraw their own this way). */
export async function rejectGainSet(db: Db, { organisationId, actor, id, comment }: Scope & { actor: string; id: string; comment: string }): Promise<TransitionResult> {
  if (!comment.trim()) throw new DomainError("invalid_body", "Say why it is rejected.", { status: 400, field: "comment" });
  return db.transaction(async (tx) => {
    const row = await lockGainSet(tx, organisationId, id);
    requireState(row, "proposed", "rejected");
    const updated = await transition(tx, row, { actor, state: "rejected", comment, action: "gain_set.rejected", set: { decidedBy: actor, decidedAt: new Date() } });
    return result(updated);
  });
}

// ---- For releases -------------------------------------------------------------------------

/** Everything a device needs of a gain set (the signed configuration's per-loop fields). */
export type DeviceGainSet = {
  gainSetId: string;
  loopTemplateId: string;
  version: number;
  state: GainSetState;
  form: "parallel" | "standard";
  /** Parallel gains (kp, ki /s, kd s): what the device's controller runs. */
  gains: { kp: number; ki: number; kd: number };
  enteredGains: EnteredGains;
  filterN: number | null;
  setpointWeight: number;
  antiWindup: GainSetAntiWindup;
  trackingTime: number | null;
  outputMin: number;
  outputMax: number;
  integratorMin: number;
  integratorMax: number;
  samplePeriod: number;
};

function toDeviceGainSet(row: GainSetRow, template: TemplateRow): DeviceGainSet {
  const limits = resolveLimits(row, template);
  return {
    gainSetId: row.id,
    loopTemplateId: row.loopTemplateId,
    version: row.version,
    state: row.state,
    form: row.form,
    gains: row.gains,
    enteredGains: row.enteredGains ?? ({ form: "parallel", ...row.gains } as EnteredGains),
    filterN: row.filterN,
    setpointWeight: row.setpointWeight,
    antiWindup: row.antiWindup,
    trackingTime: row.trackingTimeS,
    outputMin: limits.outputMin,
    outputMax: limits.outputMax,
    integratorMin: limits.integratorMin,
    integratorMax: limits.integratorMax,
    samplePeriod: limits.samplePeriodS,
  };
}

/** A gain set and its device fields in any state; null when not in this organisation. */
export async function getDeviceGainSet(db: Db, { organisationId, id }: Scope & { id: string }): Promise<DeviceGainSet | null> {
  if (!z.uuid().safeParse(id).success) return null;
  const [found] = await db
    .select({ row: gainSet, template: loopTemplate })
    .from(gainSet)
    .innerJoin(loopTemplate, and(eq(loopTemplate.organisationId, gainSet.organisationId), eq(loopTemplate.id, gainSet.loopTemplateId)))
    .where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, id)))
    .limit(1);
  return found ? toDeviceGainSet(found.row, found.template) : null;
}

/**
 * The gain set a release may send: 404 `not_found` when not in this organisation, 409
 * `not_approved` unless it is approved (or already released, for a further release).
 */
export async function requireApprovedGainSet(db: Db, { organisationId, id, allowReleased = true }: Scope & { id: string; allowReleased?: boolean }): Promise<DeviceGainSet> {
  const found = await getDeviceGainSet(db, { organisationId, id });
  if (!found) throw notFound();
  if (!(found.state === "approved" || (allowReleased && found.state === "released"))) {
    throw new DomainError("not_approved", `Gain set v${found.version} is ${found.state}; only an approved gain set can be released.`, { status: 409 });
  }
  return found;
}

/** approved → released when a release starts (idempotent: an already released set is left as it is). */
export async function markGainSetReleased(db: Db, { organisationId, actor, id, releaseId }: Scope & { actor: string; id: string; releaseId: string }): Promise<TransitionResult> {
  return db.transaction(async (tx) => {
    const row = await lockGainSet(tx, organisationId, id);
    if (row.state === "released") return result(row);
    if (row.state !== "approved") throw new DomainError("not_approved", `Gain set v${row.version} is ${row.state}; only an approved gain set can be released.`, { status: 409 });
    const updated = await transition(tx, row, { actor, state: "released", comment: "", action: "gain_set.released", set: {}, detail: { releaseId } });
    return result(updated);
  });
}

/** approved | released → retired (superseded or rolled back), with a comment. Idempotent. */
export async function retireGainSet(db: Db, { organisationId, actor, id, comment = "" }: Scope & { actor: string; id: string; comment?: string }): Promise<TransitionResult> {
  return db.transaction(async (tx) => {
    const row = await lockGainSet(tx, organisationId, id);
    if (row.state === "retired") return result(row);
    if (row.state !== "approved" && row.state !== "released") throw new DomainError("invalid_state", `Gain set v${row.version} is ${row.state}; only an approved or released gain set can be retired.`, { status: 409 });
    const updated = await transition(tx, row, { actor, state: "retired", comment, action: "gain_set.retired", set: {} });
    return result(updated);
  });
}
