// Releases: create (with the typed machine count), read, list, hold, resume, roll back, and
// the steps the `release.advance` job takes (guard → widen → complete). Every change is
// audited. States and the guard rule: DEVELOPERS.md "Releases".
import { and, asc, count, desc, eq, inArray, sql } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { gainSet, loop, organisation, release, releaseTarget, releaseWave, user } from "~/.server/db/schema";
import { recordAudit } from "~/.server/audit/record-audit";
import { sendEmail } from "~/.server/email/send-email";
import { releaseHeldEmail } from "~/.server/email/templates";
import { env } from "~/.server/env";
import { DomainError } from "~/lib/errors";
import { describeGuardRule, evaluateGuard } from "~/lib/release/guard";
import type { CreateReleaseInput } from "~/lib/release/schemas";
import type { ReleaseFigures, ReleaseState, TargetState } from "~/lib/release/types";
import { loadGuardInput } from "./guard-data";
import { groupByMachine, requireGainSetForRelease, resolveTargetLoops } from "./targets";

type Ctx = { organisationId: string };
type Actor = { actor: string };

const ACTIVE: ReleaseState[] = ["pending", "piloting", "widening", "held"];

/** Machines and loops a target reaches, with what they run now. */
export async function previewRelease(db: Db, { organisationId, gainSetId, target }: Ctx & Pick<CreateReleaseInput, "gainSetId" | "target">) {
  const set = await requireGainSetForRelease(db, { organisationId, gainSetId });
  const loops = await resolveTargetLoops(db, { organisationId, loopTemplateId: set.loopTemplateId, modelId: set.modelId, target });
  const machines = groupByMachine(loops);
  return { gainSet: { id: set.id, version: set.version, state: set.state, gains: set.gains, templateKey: set.templateKey, templateName: set.templateName }, machineCount: machines.length, loopCount: loops.length, machines };
}

/** Pilot machines: the chosen ones, or an evenly spread share (at least one) of the target. */
export function choosePilot(machineIds: string[], pilot: CreateReleaseInput["pilot"]): string[] {
  if (pilot.machineIds?.length) return [...new Set(pilot.machineIds)];
  const n = Math.max(1, Math.ceil((pilot.share ?? 0.1) * machineIds.length));
  if (n >= machineIds.length) return [...machineIds];
  const step = machineIds.length / n;
  return Array.from({ length: n }, (_, i) => machineIds[Math.floor(i * step)]);
}

export async function createRelease(db: Db, { organisationId, actor, input, now = new Date() }: Ctx & Actor & { input: CreateReleaseInput; now?: Date }) {
  return db.transaction(async (tx) => {
    const set = await requireGainSetForRelease(tx, { organisationId, gainSetId: input.gainSetId });
    if (set.state !== "approved") throw new DomainError("not_approved", `Gain set v${set.version} is ${set.state}; only an approved gain set can be released.`, { status: 409, field: "gainSetId" });
    // Lock the gain set so two releases of it cannot start together.
    await tx.execute(sql`select 1 from gain_set where organisation_id = ${organisationId} and id = ${set.id}::uuid for update`);
    const loops = await resolveTargetLoops(tx, { organisationId, loopTemplateId: set.loopTemplateId, modelId: set.modelId, target: input.target });
    const machineIds = [...new Set(loops.map((l) => l.machineId))];
    if (machineIds.length === 0) throw new DomainError("empty_target", "The target reaches no active machine with this loop.", { status: 400, field: "target" });
    if (input.confirmMachineCount !== machineIds.length) {
      throw new DomainError("confirm_count_mismatch", `This release reaches ${machineIds.length} machine${machineIds.length === 1 ? "" : "s"}; type that number to start it.`, { status: 400, field: "confirmMachineCount" });
    }
    const pilotIds = choosePilot(machineIds, input.pilot);
    const outside = pilotIds.filter((id) => !machineIds.includes(id));
    if (outside.length) throw new DomainError("invalid_pilot", `Pilot machine ${outside[0]} is not in the target.`, { status: 400, field: "pilot.machineIds" });
    const busy = await tx
      .select({ loopId: releaseTarget.loopId })
      .from(releaseTarget)
      .innerJoin(release, and(eq(release.organisationId, releaseTarget.organisationId), eq(release.id, releaseTarget.releaseId)))
      .where(and(eq(releaseTarget.organisationId, organisationId), inArray(releaseTarget.loopId, loops.map((l) => l.loopId)), inArray(release.state, ACTIVE)))
      .limit(1);
    if (busy.length) throw new DomainError("loop_in_release", "Some of these loops are in a release that has not finished; complete or roll it back first.", { status: 409 });

    const [row] = await tx
      .insert(release)
      .values({
        organisationId,
        gainSetId: set.id,
        loopTemplateId: set.loopTemplateId,
        state: "pending",
        target: input.target,
        pilot: input.pilot,
        guardWindowMinutes: input.guard.windowMinutes,
        maxIaeIncrease: input.guard.maxIaeIncrease ?? null,
        maxRejectShare: input.guard.maxRejectShare ?? null,
        machineCount: machineIds.length,
        createdBy: actor,
        createdAt: now,
        updatedAt: now,
      })
      .returning({ id: release.id });
    const pilotSet = new Set(pilotIds);
    const waves = pilotSet.size === machineIds.length ? [0] : [0, 1];
    await tx.insert(releaseWave).values(waves.map((index) => ({ organisationId, releaseId: row.id, index })));
    await tx.insert(releaseTarget).values(loops.map((l) => ({ organisationId, releaseId: row.id, loopId: l.loopId, machineId: l.machineId, wave: pilotSet.has(l.machineId) ? 0 : 1 })));
    await tx.update(gainSet).set({ state: "released" }).where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, set.id)));
    await recordAudit(tx, {
      organisationId,
      actor,
      action: "release.created",
      targetType: "release",
      targetId: row.id,
      detail: { gainSetId: set.id, version: set.version, machines: machineIds.length, loops: loops.length, pilotMachines: pilotIds.length },
      after: { state: "pending", gainSetId: set.id, target: input.target, pilot: input.pilot, guard: input.guard },
    });
    // The pilot is offered at once; the job takes it from there.
    await offerWave(tx, { organisationId, releaseId: row.id, wave: 0, actor, now });
    return { id: row.id, state: "piloting" as ReleaseState };
  });
}

/**
 * Offer a wave: each included, pending target's loop gets the gain set as a new, higher
 * configuration version; what it had before is kept on the target for roll back.
 */
async function offerWave(db: Db, { organisationId, releaseId, wave, actor, now }: Ctx & { releaseId: string; wave: number; actor: string; now: Date }) {
  const [rel] = await db.select({ gainSetId: release.gainSetId, windowMinutes: release.guardWindowMinutes }).from(release).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
  const offered = await db.execute<{ loop_id: string }>(sql`
    with prev as (
      select l.id, l.gain_set_id, l.gains, l.config_version from loop l
      join release_target rt on rt.organisation_id = l.organisation_id and rt.loop_id = l.id
      where rt.organisation_id = ${organisationId} and rt.release_id = ${releaseId}::uuid and rt.wave = ${wave} and rt.include and rt.state = 'pending'
      order by l.id
      for update of l
    ), upd as (
      update loop l set config_version = prev.config_version + 1, gains = gs.gains, gain_set_id = gs.id
      from prev, gain_set gs
      where l.organisation_id = ${organisationId} and l.id = prev.id and gs.organisation_id = ${organisationId} and gs.id = ${rel.gainSetId}::uuid
      returning l.id, l.config_version
    )
    update release_target rt set state = 'offered', version = upd.config_version, previous_gain_set_id = prev.gain_set_id,
      previous_gains = prev.gains, previous_version = prev.config_version, offered_at = ${now.toISOString()}::timestamptz
    from prev join upd on upd.id = prev.id
    where rt.organisation_id = ${organisationId} and rt.release_id = ${releaseId}::uuid and rt.loop_id = prev.id
    returning rt.loop_id`);
  await db
    .update(releaseWave)
    .set({ state: "offered", offeredAt: now })
    .where(and(eq(releaseWave.organisationId, organisationId), eq(releaseWave.releaseId, releaseId), eq(releaseWave.index, wave)));
  const state: ReleaseState = wave === 0 ? "piloting" : "widening";
  await db
    .update(release)
    .set({
      state,
      updatedAt: now,
      ...(wave === 0 ? { startedAt: now, guardEndsAt: new Date(now.getTime() + rel.windowMinutes * 60_000) } : {}),
    })
    .where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
  await recordAudit(db, { organisationId, actor, action: "release.wave_offered", targetType: "release", targetId: releaseId, detail: { wave, loops: offered.rows.length, state } });
}

async function lockRelease(db: Db, { organisationId, releaseId }: Ctx & { releaseId: string }) {
  const rows = await db.execute<{ id: string }>(sql`select id from release where organisation_id = ${organisationId} and id = ${releaseId}::uuid for update`);
  if (!rows.rows.length) throw new DomainError("not_found", "No such release.", { status: 404 });
  const [row] = await db.select().from(release).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
  return row;
}

export async function getRelease(db: Db, { organisationId, releaseId }: Ctx & { releaseId: string }) {
  const [row] = await db.select().from(release).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
  if (!row) throw new DomainError("not_found", "No such release.", { status: 404 });
  const waves = await db.select().from(releaseWave).where(and(eq(releaseWave.organisationId, organisationId), eq(releaseWave.releaseId, releaseId))).orderBy(asc(releaseWave.index));
  const targets = await db
    .select({
      machineId: releaseTarget.machineId,
      loopId: releaseTarget.loopId,
      loopKey: loop.key,
      wave: releaseTarget.wave,
      state: releaseTarget.state,
      version: releaseTarget.version,
      include: releaseTarget.include,
      rejectReason: releaseTarget.rejectReason,
      rollbackState: releaseTarget.rollbackState,
      rollbackVersion: releaseTarget.rollbackVersion,
      serial: sql<string>`(select serial from machine m where m.organisation_id = ${releaseTarget.organisationId} and m.id = ${releaseTarget.machineId})`,
    })
    .from(releaseTarget)
    .innerJoin(loop, and(eq(loop.organisationId, releaseTarget.organisationId), eq(loop.id, releaseTarget.loopId)))
    .where(and(eq(releaseTarget.organisationId, organisationId), eq(releaseTarget.releaseId, releaseId)))
    .orderBy(asc(releaseTarget.wave), asc(releaseTarget.machineId), asc(loop.key));
  const counts = (index: number) => {
    const c: Record<TargetState, number> = { pending: 0, offered: 0, applied: 0, rejected: 0 };
    for (const t of targets) if (t.wave === index && t.include) c[t.state] += 1;
    return c;
  };
  return {
    id: row.id,
    state: row.state,
    gainSetId: row.gainSetId,
    loopTemplateId: row.loopTemplateId,
    heldReason: row.heldReason,
    machineCount: row.machineCount,
    guard: { windowMinutes: row.guardWindowMinutes, maxIaeIncrease: row.maxIaeIncrease, maxRejectShare: row.maxRejectShare, rule: describeGuardRule({ maxIaeIncrease: row.maxIaeIncrease, maxRejectShare: row.maxRejectShare }) },
    figures: row.figures,
    createdBy: row.createdBy,
    createdAt: row.createdAt.toISOString(),
    startedAt: row.startedAt?.toISOString() ?? null,
    guardEndsAt: row.guardEndsAt?.toISOString() ?? null,
    completedAt: row.completedAt?.toISOString() ?? null,
    waves: waves.map((w) => ({ index: w.index, state: w.state, counts: counts(w.index) })),
    targets: targets.map((t) => ({
      machineId: t.machineId,
      serial: t.serial,
      loopId: t.loopId,
      loopKey: t.loopKey,
      wave: t.wave,
      state: t.state,
      version: t.version,
      include: t.include,
      rejectReason: t.rejectReason,
      rollback: t.rollbackState ? { state: t.rollbackState, version: t.rollbackVersion } : null,
    })),
  };
}
export type ReleaseView = Awaited<ReturnType<typeof getRelease>>;

export async function listReleases(db: Db, { organisationId, page, pageSize, state }: Ctx & { page: number; pageSize: number; state?: ReleaseState }) {
  const where = and(eq(release.organisationId, organisationId), state ? eq(release.state, state) : undefined);
  const [{ total }] = await db.select({ total: count() }).from(release).where(where);
  const rows = await db
    .select({
      id: release.id,
      state: release.state,
      gainSetId: release.gainSetId,
      gainSetVersion: gainSet.version,
      templateKey: sql<string>`(select key from loop_template t where t.organisation_id = ${release.organisationId} and t.id = ${release.loopTemplateId})`,
      machineCount: release.machineCount,
      heldReason: release.heldReason,
      createdAt: release.createdAt,
      applied: sql<number>`(select count(*)::int from release_target rt where rt.organisation_id = ${release.organisationId} and rt.release_id = ${release.id} and rt.include and rt.state = 'applied')`,
      loops: sql<number>`(select count(*)::int from release_target rt where rt.organisation_id = ${release.organisationId} and rt.release_id = ${release.id} and rt.include)`,
    })
    .from(release)
    .innerJoin(gainSet, and(eq(gainSet.organisationId, release.organisationId), eq(gainSet.id, release.gainSetId)))
    .where(where)
    .orderBy(desc(release.createdAt), asc(release.id))
    .limit(pageSize)
    .offset((page - 1) * pageSize);
  return { items: rows.map((r) => ({ ...r, createdAt: r.createdAt.toISOString() })), total: Number(total), page, pageSize };
}

/** Hold: nothing more is offered until someone resumes or rolls back. Already-offered loops keep their offer. */
export async function holdRelease(db: Db, { organisationId, releaseId, actor, reason, now = new Date(), figures }: Ctx & Actor & { releaseId: string; reason: string; now?: Date; figures?: ReleaseFigures }) {
  const held = await db.transaction(async (tx) => {
    const row = await lockRelease(tx, { organisationId, releaseId });
    if (!["pending", "piloting", "widening"].includes(row.state)) throw new DomainError("invalid_state", `A ${row.state.replace("_", " ")} release cannot be held.`, { status: 409 });
    await tx
      .update(release)
      .set({ state: "held", heldReason: reason, updatedAt: now, ...(figures ? { figures } : {}) })
      .where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
    await recordAudit(tx, { organisationId, actor, action: "release.held", targetType: "release", targetId: releaseId, detail: { reason, automatic: actor === "system" }, before: { state: row.state, heldReason: row.heldReason }, after: { state: "held", heldReason: reason } });
    return row;
  });
  try {
    await emailHold(db, { organisationId, releaseId, createdBy: held.createdBy, gainSetId: held.gainSetId, reason });
  } catch (error) {
    console.error(`[releases] hold e-mail for ${releaseId} not sent:`, (error as Error).message);
  }
}

/** Resume a held release: the engineer accepts the figures, and the remaining waves are offered. */
export async function resumeRelease(db: Db, { organisationId, releaseId, actor, now = new Date() }: Ctx & Actor & { releaseId: string; now?: Date }) {
  await db.transaction(async (tx) => {
    const row = await lockRelease(tx, { organisationId, releaseId });
    if (row.state !== "held") throw new DomainError("invalid_state", `Only a held release can be resumed; this one is ${row.state.replace("_", " ")}.`, { status: 409 });
    await recordAudit(tx, { organisationId, actor, action: "release.resumed", targetType: "release", targetId: releaseId, before: { state: "held", heldReason: row.heldReason }, after: { state: "widening", heldReason: null } });
    await tx.update(release).set({ heldReason: null, updatedAt: now }).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
    await widen(tx, { organisationId, releaseId, actor, now });
  });
}

async function widen(db: Db, { organisationId, releaseId, actor, now }: Ctx & { releaseId: string; actor: string; now: Date }) {
  const waves = await db.select().from(releaseWave).where(and(eq(releaseWave.organisationId, organisationId), eq(releaseWave.releaseId, releaseId))).orderBy(asc(releaseWave.index));
  const pending = waves.filter((w) => w.state === "pending");
  for (const w of pending) await offerWave(db, { organisationId, releaseId, wave: w.index, actor, now });
  if (!pending.length) await db.update(release).set({ state: "widening", updatedAt: now }).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
  await completeIfDone(db, { organisationId, releaseId, now });
}

/**
 * Roll back: every loop that applied the release (or still has it on offer) is offered its
 * previous gains as a new, higher version, tracked on the target (rollbackState/Version).
 */
export async function rollbackRelease(db: Db, { organisationId, releaseId, actor, now = new Date() }: Ctx & Actor & { releaseId: string; now?: Date }) {
  await db.transaction(async (tx) => {
    const row = await lockRelease(tx, { organisationId, releaseId });
    if (row.state === "rolled_back") throw new DomainError("invalid_state", "This release has already been rolled back.", { status: 409 });
    const reverted = await tx.execute<{ loop_id: string }>(sql`
      with t as (
        select rt.loop_id, rt.previous_gain_set_id, rt.previous_gains from release_target rt
        where rt.organisation_id = ${organisationId} and rt.release_id = ${releaseId}::uuid and rt.state in ('applied', 'offered') and rt.previous_gains is not null
        order by rt.loop_id
      ), upd as (
        update loop l set config_version = l.config_version + 1, gains = t.previous_gains, gain_set_id = t.previous_gain_set_id
        from t where l.organisation_id = ${organisationId} and l.id = t.loop_id
        returning l.id, l.config_version
      )
      update release_target rt set rollback_state = 'offered', rollback_version = upd.config_version
      from upd where rt.organisation_id = ${organisationId} and rt.release_id = ${releaseId}::uuid and rt.loop_id = upd.id
      returning rt.loop_id`);
    await tx.update(releaseWave).set({ state: "stopped" }).where(and(eq(releaseWave.organisationId, organisationId), eq(releaseWave.releaseId, releaseId), eq(releaseWave.state, "pending")));
    await tx.update(release).set({ state: "rolled_back", updatedAt: now }).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
    await tx.update(gainSet).set({ state: "retired" }).where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, row.gainSetId)));
    await recordAudit(tx, { organisationId, actor, action: "release.rolled_back", targetType: "release", targetId: releaseId, detail: { loops: reverted.rows.length }, before: { state: row.state }, after: { state: "rolled_back" } });
  });
}

async function completeIfDone(db: Db, { organisationId, releaseId, now }: Ctx & { releaseId: string; now: Date }) {
  const [{ open, pendingWaves }] = (
    await db.execute<{ open: number; pendingWaves: number }>(sql`
      select (select count(*)::int from release_target where organisation_id = ${organisationId} and release_id = ${releaseId}::uuid and include and state in ('pending', 'offered')) as open,
             (select count(*)::int from release_wave where organisation_id = ${organisationId} and release_id = ${releaseId}::uuid and state = 'pending') as "pendingWaves"`)
  ).rows;
  if (Number(open) > 0 || Number(pendingWaves) > 0) return false;
  await db.update(releaseWave).set({ state: "complete", completedAt: now }).where(and(eq(releaseWave.organisationId, organisationId), eq(releaseWave.releaseId, releaseId), eq(releaseWave.state, "offered")));
  await db.update(release).set({ state: "complete", completedAt: now, updatedAt: now }).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
  await recordAudit(db, { organisationId, actor: "system", action: "release.completed", targetType: "release", targetId: releaseId, before: { state: "widening" }, after: { state: "complete" } });
  return true;
}

/**
 * One step of a release, run by the `release.advance` job (idempotent). Piloting: evaluate the
 * guard — hold at once when it says so; once the window has passed with at least one pilot
 * loop applied and no hold, widen. Widening: complete when every included target answered.
 */
export async function advanceRelease(db: Db, { organisationId, releaseId, now = new Date() }: Ctx & { releaseId: string; now?: Date }) {
  let hold: { reason: string; figures: ReleaseFigures } | null = null;
  await db.transaction(async (tx) => {
    const row = await lockRelease(tx, { organisationId, releaseId });
    if (row.state === "widening") {
      await completeIfDone(tx, { organisationId, releaseId, now });
      return;
    }
    if (row.state !== "piloting" || !row.startedAt) return;
    const input = await loadGuardInput(tx, { organisationId, releaseId, loopTemplateId: row.loopTemplateId, startedAt: row.startedAt });
    const decision = evaluateGuard({ ...input, settings: { maxIaeIncrease: row.maxIaeIncrease, maxRejectShare: row.maxRejectShare } });
    const figures: ReleaseFigures = { ...decision.figures, evaluatedAt: now.toISOString(), hold: decision.hold, reason: decision.reason };
    await tx.update(release).set({ figures, updatedAt: now }).where(and(eq(release.organisationId, organisationId), eq(release.id, releaseId)));
    if (decision.hold) {
      hold = { reason: decision.reason!, figures };
      return;
    }
    const applied = await tx
      .select({ n: count() })
      .from(releaseTarget)
      .where(and(eq(releaseTarget.organisationId, organisationId), eq(releaseTarget.releaseId, releaseId), eq(releaseTarget.wave, 0), eq(releaseTarget.state, "applied")));
    if (row.guardEndsAt && now >= row.guardEndsAt && Number(applied[0].n) > 0) {
      await tx.update(releaseWave).set({ state: "complete", completedAt: now }).where(and(eq(releaseWave.organisationId, organisationId), eq(releaseWave.releaseId, releaseId), eq(releaseWave.index, 0)));
      await widen(tx, { organisationId, releaseId, actor: "system", now });
    }
  });
  if (hold) {
    const h = hold as { reason: string; figures: ReleaseFigures };
    await holdRelease(db, { organisationId, releaseId, actor: "system", reason: h.reason, figures: h.figures, now });
  }
}

/** Every release the job should look at. */
export async function listActiveReleases(db: Db) {
  return db.select({ organisationId: release.organisationId, id: release.id }).from(release).where(inArray(release.state, ["piloting", "widening"]));
}

/** E-mail the release's engineers (its starter and the gain set's author). A failed send is logged: the hold stands. */
async function emailHold(db: Db, { organisationId, releaseId, createdBy, gainSetId, reason }: Ctx & { releaseId: string; createdBy: string; gainSetId: string; reason: string }) {
  const [set] = await db.select({ createdBy: gainSet.createdBy, version: gainSet.version }).from(gainSet).where(and(eq(gainSet.organisationId, organisationId), eq(gainSet.id, gainSetId)));
  const ids = [...new Set([createdBy, set?.createdBy].filter((x): x is string => !!x && !x.includes(":") && x !== "system"))];
  if (!ids.length) return;
  const people = await db.select({ email: user.email, name: user.name }).from(user).where(inArray(user.id, ids));
  const [org] = await db.select({ slug: organisation.slug, name: organisation.name }).from(organisation).where(eq(organisation.id, organisationId));
  const url = `${env().BETTER_AUTH_URL.replace(/\/$/, "")}/o/${org.slug}/releases/${releaseId}`;
  for (const p of people) {
    await sendEmail({ to: p.email, ...releaseHeldEmail(p.name, org.name, set?.version ?? 0, reason, url) });
  }
}
