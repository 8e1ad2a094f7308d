// Loop-health data for the end-to-end tests: two Halden Plastics machines get a device and 30
// days of hourly digests through the device API (so ingest keeps the hourly rollups), then
// their evaluation runs as the job would. One machine's zone-2 heater wears out (a saturation
// ramp to the act band); the other winds up and saturates on three loops (several findings to
// acknowledge at once). Done once per database: a machine that already has findings is left alone.
import { and, asc, eq, sql } from "drizzle-orm";
import { customer, finding, machine, organisation, site } from "~/.server/db/schema";
import { evaluateMachineHealth } from "~/.server/health/evaluate";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { db } from "../support/db";
import { APP_URL, postJson, signIn } from "../support/http";

export type HealthDemo = {
  /** The machine the overview should name first (its zone-2 output is pinned). */
  attentionMachineId: string;
  attentionSerial: string;
  /** A machine with several open findings. */
  bulkMachineId: string;
  /** A saturation finding with a chart. */
  chartFindingId: string;
  /** A machine the site manager may ask a retune for. */
  retuneMachineId: string;
};

const HOUR = 3_600_000;
const DAYS = 30;

type Shape = (loopIndex: number, hour: number, hours: number) => Record<string, number>;

/** Zone 2 wears: its output sits at the top limit for a growing share of each hour. */
const heaterWear: Shape = (n, i, hours) => (n === 1 ? { satHighFrac: Math.min(0.6, 0.02 + (0.5 * i) / hours + (i % 24 === 5 ? 0.05 : 0)) } : { satHighFrac: 0 });
/** Three loops held at their limits: windup with the output saturated. */
const pinned: Shape = (n, i) => (n < 3 ? { satHighFrac: 0.3 + 0.02 * Math.sin(i / 5), intClampFrac: 0.35 + 0.03 * Math.cos(i / 7) } : { satHighFrac: 0, intClampFrac: 0 });

async function haldenMachines() {
  return db()
    .select({ id: machine.id, serial: machine.serial, organisationId: machine.organisationId })
    .from(machine)
    .innerJoin(site, and(eq(site.organisationId, machine.organisationId), eq(site.id, machine.siteId)))
    .innerJoin(customer, and(eq(customer.organisationId, site.organisationId), eq(customer.id, site.customerId)))
    .innerJoin(organisation, eq(organisation.id, machine.organisationId))
    .where(and(eq(organisation.slug, "corvid"), eq(customer.name, "Halden Plastics"), eq(machine.status, "active")))
    .orderBy(asc(machine.serial));
}

async function openFindingsOf(organisationId: string, machineId: string) {
  return db()
    .select({ id: finding.id, kind: finding.kind })
    .from(finding)
    .where(and(eq(finding.organisationId, organisationId), eq(finding.machineId, machineId), sql`${finding.state} in ('open', 'acknowledged')`));
}

async function giveHistory(organisationId: string, machineId: string, shape: Shape) {
  const owner = await signIn("owner@corvid.example");
  const issued = await postJson(`/api/v1/o/corvid/machines/${machineId}/enrolment-code`, {}, owner);
  if (issued.status !== 201) throw new Error(`enrolment code: ${issued.status}`);
  const { enrolmentCode } = (await issued.json()) as { enrolmentCode: { code: string } };
  const device = new DeviceClient(APP_URL, await createDeviceIdentity());
  const enrolled = await device.enrol(enrolmentCode.code);
  if (enrolled.status !== 201) throw new Error(`enrol: ${enrolled.status}`);
  // The last window ends a minute ago: a loop whose newest digest is older than three intervals is judged silent, nothing else.
  const end = Date.now() - 60_000;
  const hours = DAYS * 24;
  const start = end - hours * HOUR;
  const all = (device.identity.loopKeys ?? []).flatMap((key, n) =>
    Array.from({ length: hours }, (_, i) =>
      sampleDigest(key, i + 1, new Date(start + i * HOUR), 3600, { iae: 700 + 60 * Math.sin(i / 9) + 25 * n, oscCount: 0, ...shape(n, i, hours) }),
    ),
  );
  for (let i = 0; i < all.length; i += 500) {
    const posted = await device.postDigests(all.slice(i, i + 500));
    if (posted.status !== 200) throw new Error(`digests: ${posted.status} ${await posted.text()}`);
  }
  await evaluateMachineHealth(db(), { organisationId, machineId });
}

export async function ensureHealthDemo(): Promise<HealthDemo> {
  const machines = await haldenMachines();
  if (machines.length < 4) throw new Error("the demo database needs four Halden Plastics machines: run scripts/seed.ts");
  // The first Halden machine is the accessibility walk's; these are the next ones.
  const [, attention, bulk, retune] = machines;
  for (const [m, shape] of [[attention, heaterWear], [bulk, pinned]] as const) {
    if ((await openFindingsOf(m.organisationId, m.id)).length === 0) await giveHistory(m.organisationId, m.id, shape);
  }
  const chart = (await openFindingsOf(attention.organisationId, attention.id)).find((f) => f.kind === "saturation");
  if (!chart) throw new Error(`no saturation finding on ${attention.serial} after its evaluation`);
  return { attentionMachineId: attention.id, attentionSerial: attention.serial, bulkMachineId: bulk.id, chartFindingId: chart.id, retuneMachineId: retune.id };
}
