// Gain sets saved from the tuning bench. A draft must fit its loop template's safety
// envelope: gains outside it are refused here, before anyone can propose them.
import { DomainError } from "~/lib/errors";
import { and, asc, eq, sql } from "drizzle-orm";
import { z } from "zod";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { gainSet, loopTemplate, machineModel } from "~/.server/db/schema";
import { checkGainSigns, toParallelGains } from "~/lib/control";

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

export async function saveDraftGainSet(db: Db, { organisationId, actor, input }: { organisationId: string; actor: string; input: DraftGainSetInput }) {
  return db.transaction(async (tx) => {
    // Lock the template row so two saves cannot take the same version number.
    const [template] = await tx
      .select({ id: loopTemplate.id, key: loopTemplate.key, envelope: loopTemplate.gainEnvelope })
      .from(loopTemplate)
      .where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.id, input.templateId)))
      .for("update")
      .limit(1);
    if (!template) throw new DomainError("invalid_gain_set", "No such loop template in this organisation.", { status: 404, field: "templateId" });
    const parallel = toParallelGains(input.gains);
    const gains = { kp: round(parallel.kp), ki: round(parallel.ki), kd: round(parallel.kd) };
    for (const name of ["kp", "ki", "kd"] as const) {
      const [min, max] = template.envelope[name];
      if (gains[name] < min || gains[name] > max) {
        throw new DomainError("invalid_gain_set", `${name} = ${gains[name]} is outside the safety envelope of ${template.key} (${min} to ${max}).`, { status: 400, field: name });
      }
    }
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
        gains,
        filterN: input.filterN ?? null,
        origin: input.origin ?? { rule: null, controller: null, model: null, figures: {} },
        note: input.note,
        createdBy: actor,
      })
      .returning({ id: gainSet.id, version: gainSet.version });
    await recordAudit(tx, {
      organisationId,
      actor,
      action: "gain_set.drafted",
      targetType: "gain_set",
      targetId: created!.id,
      detail: { template: template.key, version: next, gains },
    });
    return { id: created!.id, version: next, templateKey: template.key, gains };
  });
}
