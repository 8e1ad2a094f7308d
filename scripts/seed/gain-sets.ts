// Demo gain sets: a history an engineer would recognise (invented). Corvid's zone_1 has an
// approved v1 (the default gains, proposed by one engineer and approved by the other), a
// proposed v2 waiting for review and a draft v3; Pellworth's flow loop has a draft.
import type { Db } from "~/.server/db/client";
import { approveGainSet, createGainSet, proposeGainSet } from "~/.server/tuning/gain-sets";

type Templates = { id: string; key: string }[];

export async function seedGainSets(db: Db, { organisationId, slug, templates, users }: { organisationId: string; slug: string; templates: Templates; users: Map<string, string> }) {
  const byKey = new Map(templates.map((t) => [t.key, t.id]));
  const simc = (gain: number, timeConstant: number, deadTime: number) => ({ rule: "simc", controller: "PI", model: { gain, timeConstant, deadTime }, figures: {} });
  if (slug === "corvid") {
    const zone = byKey.get("zone_1")!;
    const engineer = users.get("engineer@corvid.example")!;
    const second = users.get("engineer2@corvid.example")!;
    const v1 = await createGainSet(db, {
      organisationId,
      actor: engineer,
      input: { loopTemplateId: zone, form: "parallel", gains: { kp: 6.25, ki: 0.039, kd: 0 }, note: "Commissioning gains from the step test on line CTM-EX-1001." },
      origin: simc(1.2, 300, 20),
    });
    await proposeGainSet(db, { organisationId, actor: engineer, role: "engineer", id: v1.id });
    await approveGainSet(db, { organisationId, actor: second, id: v1.id, comment: "Matches the step test; margins comfortable." });
    const v2 = await createGainSet(db, {
      organisationId,
      actor: engineer,
      input: { loopTemplateId: zone, form: "standard", gains: { kc: 7, ti: 155.6, td: 0 }, note: "Faster recovery after die changes; still above GM 2.", basedOnId: v1.id },
      origin: simc(1.2, 280, 20),
    });
    await proposeGainSet(db, { organisationId, actor: engineer, role: "engineer", id: v2.id });
    await createGainSet(db, {
      organisationId,
      actor: second,
      input: { loopTemplateId: zone, form: "parallel", gains: { kp: 6, ki: 0.04, kd: 0 }, setpointWeight: 0.7, note: "Set-point weight to soften start-up overshoot.", basedOnId: v1.id },
      origin: simc(1.2, 300, 20),
    });
  }
  if (slug === "pellworth") {
    const flow = byKey.get("flow");
    const owner = users.get("owner@pellworth.example");
    if (flow && owner) {
      await createGainSet(db, { organisationId, actor: owner, input: { loopTemplateId: flow, form: "parallel", gains: { kp: 1.25, ki: 0.83, kd: 0 }, note: "Pump skid defaults as a first version." }, origin: simc(2, 1.5, 0.3) });
    }
  }
}
