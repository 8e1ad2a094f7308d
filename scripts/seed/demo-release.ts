// The demo's releases: one loop template per organisation (Corvid's screw speed, Pellworth's
// flow) gets a slightly firmer gain set (invented), approved by a second engineer where the
// organisation has one, and released to a pilot of two machines with an hour's guard.
import { and, eq } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { gainSet, loopTemplate, machine } from "~/.server/db/schema";
import { createRelease } from "~/.server/releases/releases";

export async function seedDemoRelease(db: Db, { organisationId, modelId, templateKey, authorId, approverId }: { organisationId: string; modelId: string; templateKey: string; authorId: string; approverId: string | null }) {
  const [template] = await db.select().from(loopTemplate).where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.modelId, modelId), eq(loopTemplate.key, templateKey)));
  if (!template) return null;
  const now = new Date();
  const gains = { kp: template.defaultGains.kp * 1.1, ki: template.defaultGains.ki * 1.05, kd: template.defaultGains.kd };
  const [set] = await db
    .insert(gainSet)
    .values({
      organisationId,
      loopTemplateId: template.id,
      version: 1,
      state: "approved",
      gains,
      origin: { rule: "SIMC", controller: "PI", model: null, figures: {} },
      note: "Slightly firmer gains after the spring load tests.",
      createdBy: authorId,
      proposedBy: authorId,
      proposedAt: now,
      decidedBy: approverId,
      decidedAt: approverId ? now : null,
    })
    .returning({ id: gainSet.id });
  const machines = await db.select({ id: machine.id }).from(machine).where(and(eq(machine.organisationId, organisationId), eq(machine.modelId, modelId), eq(machine.status, "active")));
  if (machines.length < 3) return null;
  return createRelease(db, {
    organisationId,
    actor: authorId,
    input: { gainSetId: set.id, target: { all: true }, pilot: { machineIds: [machines[0].id, machines[1].id] }, guard: { windowMinutes: 60 }, confirmMachineCount: machines.length },
  });
}
