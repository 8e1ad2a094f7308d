// Factories shared by the tests and the demo seed. Each writes straight to the database
// (no e-mail, no HTTP) and returns what it created.
import { hashPassword } from "better-auth/crypto";
import type { Db } from "~/.server/db/client";
import { createSigningKey } from "~/.server/device-auth/signing-keys";
import { account, billingAccount, customer, invitation, loopTemplate, machineModel, member, organisation, site, siteAssignment, user } from "~/.server/db/schema";
import type { GainEnvelope, HealthThresholds, ReferenceModel, StoredGains } from "~/.server/db/schema";
import { registerMachine } from "~/.server/fleet/machines";
import type { Role } from "~/lib/access/capabilities";

let counter = 0;
export function uniqueSuffix(): string {
  counter += 1;
  return `${Date.now().toString(36)}${counter.toString(36)}${Math.random().toString(36).slice(2, 6)}`;
}

const hashCache = new Map<string, string>();

export async function createUser(
  db: Db,
  { email, name, password = "flyball-demo", verified = true }: { email: string; name: string; password?: string; verified?: boolean },
) {
  const id = crypto.randomUUID();
  let hash = hashCache.get(password);
  if (!hash) hashCache.set(password, (hash = await hashPassword(password)));
  await db.insert(user).values({ id, email: email.toLowerCase(), name, emailVerified: verified });
  await db.insert(account).values({ id: crypto.randomUUID(), accountId: id, providerId: "credential", userId: id, password: hash });
  return { id, email: email.toLowerCase(), name, password };
}

export async function createOrganisation(db: Db, { name, slug }: { name: string; slug: string }) {
  const id = crypto.randomUUID();
  await db.insert(organisation).values({ id, name, slug });
  await createSigningKey(db, { organisationId: id });
  return { id, name, slug };
}

export async function addMember(db: Db, { organisationId, userId, role }: { organisationId: string; userId: string; role: Role }) {
  const id = crypto.randomUUID();
  await db.insert(member).values({ id, organizationId: organisationId, userId, role });
  return { id, organisationId, userId, role };
}

export async function createCustomer(db: Db, { organisationId, name }: { organisationId: string; name: string }) {
  const [row] = await db.insert(customer).values({ organisationId, name }).returning();
  return row!;
}

export async function createSite(db: Db, { organisationId, customerId, name, timeZone = "UTC" }: { organisationId: string; customerId: string; name: string; timeZone?: string }) {
  const [row] = await db.insert(site).values({ organisationId, customerId, name, timeZone }).returning();
  return row!;
}

export async function assignSite(db: Db, { organisationId, memberId, siteId }: { organisationId: string; memberId: string; siteId: string }) {
  await db.insert(siteAssignment).values({ organisationId, memberId, siteId });
}

/** A fresh organisation with one member of each given role, for isolation tests. */
export async function createTeam(db: Db, roles: Role[] = ["owner"]) {
  const suffix = uniqueSuffix();
  const org = await createOrganisation(db, { name: `Test Org ${suffix}`, slug: `test-${suffix}` });
  const people = [];
  for (const role of roles) {
    const person = await createUser(db, { email: `${role}-${suffix}@test.example`, name: `${role} ${suffix}` });
    const membership = await addMember(db, { organisationId: org.id, userId: person.id, role });
    people.push({ ...person, role, memberId: membership.id });
  }
  return { organisation: org, people };
}

// ---- Fleet: machine models, loop templates, machines ------------------------------------

export type LoopTemplateSpec = {
  key: string;
  name: string;
  unit: string;
  outputUnit?: string;
  samplePeriodS: number;
  outputMin: number;
  outputMax: number;
  defaultGains: StoredGains;
  gainEnvelope?: GainEnvelope;
  thresholds?: Partial<HealthThresholds>;
  /** Plant the closed-loop check on proposal uses; minimum margins (defaults GM 2, PM 30°). */
  referenceModel?: ReferenceModel | null;
  minGainMargin?: number;
  minPhaseMarginDeg?: number;
};

/** Defaults labelled as practice (app/lib/health/REFERENCES.md: no single published threshold). */
export const DEFAULT_THRESHOLDS: HealthThresholds = {
  acceptableAmplitude: 1,
  ultimatePeriod: 60,
  saturationWatch: 0.1,
  saturationAct: 0.3,
  clampWatch: 0.1,
  clampAct: 0.3,
  oscillationPerHour: 10,
  errRmsWatch: 2,
  silentAfter: 600,
};

export async function createMachineModel(
  db: Db,
  { organisationId, name, description = "", templates = [] }: { organisationId: string; name: string; description?: string; templates?: LoopTemplateSpec[] },
) {
  const [model] = await db.insert(machineModel).values({ organisationId, name, description }).returning();
  const created = [];
  for (const [position, t] of templates.entries()) created.push(await createLoopTemplate(db, { organisationId, modelId: model!.id, position, ...t }));
  return { ...model!, templates: created };
}

export async function createLoopTemplate(db: Db, { organisationId, modelId, position = 0, ...t }: LoopTemplateSpec & { organisationId: string; modelId: string; position?: number }) {
  const g = t.defaultGains;
  const [row] = await db
    .insert(loopTemplate)
    .values({
      organisationId,
      modelId,
      key: t.key,
      name: t.name,
      unit: t.unit,
      outputUnit: t.outputUnit ?? "%",
      samplePeriodS: t.samplePeriodS,
      controllerForm: "parallel",
      outputMin: t.outputMin,
      outputMax: t.outputMax,
      defaultGains: g,
      gainEnvelope: t.gainEnvelope ?? { kp: [0, Math.max(g.kp * 5, 1)], ki: [0, Math.max(g.ki * 5, 0.1)], kd: [0, Math.max(g.kd * 5, 1)] },
      thresholds: { ...DEFAULT_THRESHOLDS, ...t.thresholds },
      referenceModel: t.referenceModel ?? null,
      ...(t.minGainMargin === undefined ? {} : { minGainMargin: t.minGainMargin }),
      ...(t.minPhaseMarginDeg === undefined ? {} : { minPhaseMarginDeg: t.minPhaseMarginDeg }),
      position,
    })
    .returning();
  return row!;
}

/** A registered machine with its loops and a fresh enrolment code (the code in clear text). */
export async function createMachine(
  db: Db,
  { organisationId, serial = `SN-${uniqueSuffix()}`, modelId, siteId, firmware }: { organisationId: string; serial?: string; modelId: string; siteId: string; firmware?: string },
) {
  const result = await registerMachine(db, { organisationId, actor: "system", input: { serial, modelId, siteId, firmware } });
  return { ...result.machine, enrolmentCode: result.enrolmentCode.code };
}

/** A small test fleet: one customer, two sites, a model with two loops, and `machines` machines per site. */
export async function createTestFleet(db: Db, { organisationId, machinesPerSite = 1 }: { organisationId: string; machinesPerSite?: number }) {
  const suffix = uniqueSuffix();
  const buyer = await createCustomer(db, { organisationId, name: `Customer ${suffix}` });
  const siteA = await createSite(db, { organisationId, customerId: buyer.id, name: `Site A ${suffix}`, timeZone: "Europe/Berlin" });
  const siteB = await createSite(db, { organisationId, customerId: buyer.id, name: `Site B ${suffix}` });
  const model = await createMachineModel(db, {
    organisationId,
    name: `Model ${suffix}`,
    templates: [
      { key: "temp", name: "Temperature", unit: "°C", outputUnit: "counts", samplePeriodS: 1, outputMin: 0, outputMax: 255, defaultGains: { kp: 6, ki: 0.04, kd: 0 } },
      { key: "speed", name: "Speed", unit: "rpm", samplePeriodS: 0.1, outputMin: 0, outputMax: 100, defaultGains: { kp: 3, ki: 2, kd: 0 } },
    ],
  });
  const machines = [];
  for (const s of [siteA, siteB]) {
    for (let i = 0; i < machinesPerSite; i++) machines.push(await createMachine(db, { organisationId, modelId: model.id, siteId: s.id, serial: `T-${suffix}-${s === siteA ? "A" : "B"}${i}` }));
  }
  return { customer: buyer, sites: [siteA, siteB], model, machines };
}

/** A pending invitation to an organisation, as the team page would create it (no e-mail sent). */
export async function createInvitation(
  db: Db,
  { organisationId, inviterId, email, role = "engineer", expiresAt = new Date(Date.now() + 7 * 86_400_000) }: { organisationId: string; inviterId: string; email: string; role?: Role; expiresAt?: Date },
) {
  const id = crypto.randomUUID();
  await db.insert(invitation).values({ id, organizationId: organisationId, inviterId, email: email.toLowerCase(), role, expiresAt });
  return { id, organisationId, email: email.toLowerCase(), role, expiresAt };
}

/**
 * Mark an organisation as paying (an active per-machine subscription) without Stripe, for tests
 * about something else that grow a fleet past the trial's 5 machines. Billing's own tests go
 * through the local Stripe instead (tests/integration/billing*.test.ts).
 */
export async function markSubscribed(db: Db, { organisationId }: { organisationId: string }) {
  const values = { plan: "per_machine", status: "active", trialEndsAt: new Date(), stripeSubscriptionId: `sub_test_${organisationId.slice(0, 8)}` };
  await db.insert(billingAccount).values({ organisationId, ...values }).onConflictDoUpdate({ target: billingAccount.organisationId, set: values });
}
