// The demo's releases: one loop template per organisation (Corvid's screw speed, Pellworth's
// flow) gets a slightly firmer gain set (invented), proposed by one member and approved by
// another through the same functions the pages use, and released to a pilot of two machines
// with an hour's guard.
import { and, eq } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { loopTemplate, machine } from "~/.server/db/schema";
import { createRelease } from "~/.server/releases/releases";
import { approveGainSet, createGainSet, proposeGainSet } from "~/.server/tuning/gain-sets";

export async function seedDemoRelease(db: Db, { organisationId, modelId, templateKey, authorId, approverId }: { organisationId: string; modelId: string; templateKey: string; authorId: string; approverId: string }) {
  const [template] = await db.select().from(loopTemplate).where(and(eq(loopTemplate.organisationId, organisationId), eq(loopTemplate.modelId, modelId), eq(loopTemplate.key, templateKey)));
  if (!template) return null;
  const gains = { kp: template.defaultGains.kp * 1.1, ki: template.defaultGains.ki * 1.05, kd: template.defaultGains.kd };
  const set = await createGainSet(db, {
    organisationId,
    actor: authorId,
    input: { loopTemplateId: template.id, form: "parallel", gains, note: "Slightly firmer gains after the spring load tests." },
    origin: { rule: "simc", controller: "PI", model: null, figures: {} },
  });
  await proposeGainSet(db, { organisationId, actor: authorId, role: "engineer", id: set.id });
  await approveGainSet(db, { organisationId, actor: approverId, id: set.id, comment: "Load-test records agree; pilot first." });
  const machines = await db.select({ id: machine.id }).from(machine).where(and(eq(machine.organisationId, organisationId), eq(machine.modelId, modelId), eq(machine.status, "active")));
  if (machines.length < 3) return null;
  return createRelease(db, {
    organisationId,
    actor: authorId,
    input: { gainSetId: set.id, target: { all: true }, pilot: { machineIds: [machines[0].id, machines[1].id] }, guard: { windowMinutes: 60 }, confirmMachineCount: machines.length },
  });
}
