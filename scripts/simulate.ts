// The fleet simulator (`npm run simulate`, started by `npm start`): every active machine
// gets a device of its own that enrols through the API, runs its loops with the control
// engine against slowly ageing plants, posts digests in batches with retries and backoff,
// pulls its configuration every minute, applies new gains and acknowledges them.
//
//   npm run simulate                  live: one digest per loop per minute
//   npm run simulate -- --backfill 30d   write 30 days of history (one 1-minute window per loop per hour), then exit
//   --base-url http://127.0.0.1:3000  --only corvid,pellworth
// Live mode backfills first when an organisation has no digests at all.
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import path from "node:path";
import { asc, eq, sql } from "drizzle-orm";
import { closeDb, getDb } from "~/.server/db/client";
import { loop, loopTemplate, machine, organisation } from "~/.server/db/schema";
import { issueEnrolmentCode } from "~/.server/fleet/enrolment-codes";
import { pinJwks, type PinnedJwks } from "./simulator/config-verifier";
import { syncConfig } from "./simulator/config-sync";
import { createDeviceIdentity, DeviceClient, type DeviceIdentity } from "./simulator/device-client";
import { ageingFor, LoopSim } from "./simulator/plants";

const args = process.argv.slice(2);
const arg = (name: string) => {
  const i = args.indexOf(name);
  return i >= 0 ? args[i + 1] : undefined;
};
const baseUrl = arg("--base-url") ?? process.env.SIMULATOR_BASE_URL ?? `http://127.0.0.1:${process.env.PORT ?? 3000}`;
const backfillArg = arg("--backfill");
const only = arg("--only")?.split(",");
const STATE_FILE = path.resolve(process.env.SIMULATOR_STATE ?? "data/simulator/devices.json");
const LIVE_WINDOW_S = 60;
const BACKFILL_WINDOW_S = 60;

function parseDuration(text: string): number {
  const m = /^(\d+)(d|h)$/.exec(text);
  if (!m) throw new Error(`--backfill takes e.g. 30d or 12h, not "${text}"`);
  return Number(m[1]) * (m[2] === "d" ? 86_400_000 : 3_600_000);
}

type SimMachine = { id: string; organisationId: string; slug: string; serial: string; client: DeviceClient; loops: Map<string, LoopSim>; seq: Map<string, number>; etag?: string; queue: unknown[] };

/** A device's saved identity plus the organisation JWKS it pinned at enrolment. */
type SavedDevice = DeviceIdentity & { pin?: PinnedJwks };

function loadState(): Record<string, SavedDevice> {
  try {
    return JSON.parse(readFileSync(STATE_FILE, "utf8"));
  } catch {
    return {};
  }
}
function saveState(state: Record<string, SavedDevice>) {
  mkdirSync(path.dirname(STATE_FILE), { recursive: true });
  writeFileSync(STATE_FILE, JSON.stringify(state, null, 1), { mode: 0o600 });
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Retry on network errors, 429 (honouring Retry-After) and 5xx, with exponential backoff and jitter. */
async function withRetries(send: () => Promise<Response>, attempts = 6): Promise<Response> {
  let delay = 500;
  for (let i = 0; ; i++) {
    try {
      const response = await send();
      if (response.status !== 429 && response.status < 500) return response;
      if (i >= attempts) return response;
      const retryAfter = Number(response.headers.get("retry-after"));
      await sleep(Number.isFinite(retryAfter) && retryAfter > 0 ? retryAfter * 1000 : delay * (0.5 + Math.random()));
    } catch (error) {
      if (i >= attempts) throw error;
      await sleep(delay * (0.5 + Math.random()));
    }
    delay = Math.min(delay * 2, 30_000);
  }
}

async function enrolIfNeeded(m: { id: string; organisationId: string; serial: string; slug: string }, state: Record<string, SavedDevice>, force = false): Promise<DeviceClient> {
  let identity: SavedDevice | undefined = force ? undefined : state[m.id];
  if (identity?.deviceId) {
    // Devices saved before pinning existed pin their organisation's JWKS now (trust on first use).
    if (!identity.pin) {
      identity.pin = await pinJwks(`${baseUrl}/api/v1/o/${m.slug}/jwks.json`);
      saveState(state);
    }
    return new DeviceClient(baseUrl, identity);
  }
  identity = await createDeviceIdentity(m.serial.length % 3 === 0 ? "ES256" : "EdDSA");
  // The simulator stands in for the person who types the code into the controller.
  const { code } = await issueEnrolmentCode(getDb(), { organisationId: m.organisationId, machineId: m.id, actor: "system" });
  const client = new DeviceClient(baseUrl, identity);
  const response = await withRetries(() => client.enrol(code, "sim-1.0"));
  if (response.status !== 201) throw new Error(`enrolment of ${m.serial} failed: ${response.status} ${await response.text()}`);
  // Pin the organisation's JWKS at the address enrolment named, on the server enrolled with.
  const { jwksUrl } = (await response.json()) as { jwksUrl: string };
  const pinned: SavedDevice = { ...client.identity, pin: await pinJwks(new URL(jwksUrl, baseUrl).href) };
  state[m.id] = pinned;
  saveState(state);
  return new DeviceClient(baseUrl, pinned);
}

async function loadFleet(): Promise<SimMachine[]> {
  const db = getDb();
  const rows = await db
    .select({ id: machine.id, organisationId: machine.organisationId, serial: machine.serial, slug: organisation.slug })
    .from(machine)
    .innerJoin(organisation, eq(organisation.id, machine.organisationId))
    .where(eq(machine.status, "active"))
    .orderBy(asc(organisation.slug), asc(machine.serial));
  const loops = await db
    .select({ machineId: loop.machineId, key: loop.key, gains: loop.gains, version: loop.configVersion, samplePeriodS: loopTemplate.samplePeriodS, outputMin: loopTemplate.outputMin, outputMax: loopTemplate.outputMax, thresholds: loopTemplate.thresholds })
    .from(loop)
    .innerJoin(loopTemplate, sql`${loopTemplate.organisationId} = ${loop.organisationId} and ${loopTemplate.id} = ${loop.templateId}`);
  const state = loadState();
  const fleet: SimMachine[] = [];
  for (const [index, m] of rows.filter((r) => !only || only.includes(r.slug)).entries()) {
    const client = await enrolIfNeeded(m, state);
    const ageing = ageingFor(m.serial, index);
    const sims = new Map<string, LoopSim>();
    for (const [i, l] of loops.filter((l) => l.machineId === m.id).entries()) {
      sims.set(l.key, new LoopSim({ key: l.key, samplePeriodS: l.samplePeriodS, outputMin: l.outputMin, outputMax: l.outputMax, thresholds: l.thresholds }, l.gains, ageing, index * 97 + i * 13 + 1));
    }
    fleet.push({ ...m, client, loops: sims, seq: new Map(), queue: [] });
  }
  return fleet;
}

function digestOf(m: SimMachine, key: string, sim: LoopSim, start: Date, seconds: number, day: number) {
  const stats = sim.run(seconds, day);
  // seq: whole minutes since the epoch at the window start; increasing, and unique per loop.
  const seq = Math.floor(start.getTime() / 60_000);
  return { loop: key, seq, windowStart: start.toISOString(), windowEnd: new Date(start.getTime() + seconds * 1000).toISOString(), gainVersion: sim.gainVersion, ...stats };
}

async function flush(m: SimMachine, stats: { posted: number; rejected: number }) {
  while (m.queue.length) {
    const batch = m.queue.slice(0, 500);
    let response = await withRetries(() => m.client.postDigests(batch));
    if (response.status === 401) {
      const code = ((await response.json()) as { error: { code: string } }).error.code;
      if (["device_revoked", "unknown_key"].includes(code)) {
        const state = loadState();
        m.client = await enrolIfNeeded(m, state, true);
        response = await withRetries(() => m.client.postDigests(batch));
      }
    }
    if (!response.ok) {
      console.error(`[simulator] ${m.serial}: digests refused (${response.status}); keeping them for the next round`);
      return;
    }
    const body = (await response.json()) as { accepted: number; rejected: unknown[] };
    stats.posted += body.accepted;
    stats.rejected += body.rejected.length;
    m.queue.splice(0, batch.length);
  }
}

async function pullConfig(m: SimMachine) {
  const identity = m.client.identity as SavedDevice;
  const applied = new Map([...m.loops].map(([key, sim]) => [key, sim.gainVersion]));
  const state = { pin: identity.pin!, etag: m.etag, applied };
  const before = state.pin.keys.keys.length;
  const result = await syncConfig(m.client, state, (l) => m.loops.get(l.key)?.applyGains(l.gains, l.version), withRetries);
  m.etag = state.etag;
  if (result.status === "refused") console.error(`[simulator] ${m.serial}: configuration refused (${result.code}): ${result.message}`);
  if (result.status === "done") for (const d of result.decisions) if (d.action === "refuse") console.error(`[simulator] ${m.serial}: ${d.key}: ${d.reason}`);
  if (state.pin.keys.keys.length !== before) {
    // The JWKS was fetched again after a key rotation: keep the new keys.
    const saved = loadState();
    saved[m.id] = identity;
    saveState(saved);
  }
}

async function inPool<T>(items: T[], width: number, work: (item: T) => Promise<void>) {
  let next = 0;
  await Promise.all(Array.from({ length: Math.min(width, items.length) }, async () => {
    while (next < items.length) await work(items[next++]);
  }));
}

async function backfill(fleet: SimMachine[], spanMs: number) {
  const started = Date.now();
  const end = Math.floor(Date.now() / 3_600_000) * 3_600_000 - 3_600_000;
  const begin = end - spanMs;
  const stats = { posted: 0, rejected: 0 };
  await inPool(fleet, 4, async (m) => {
    await pullConfig(m);
    for (let t = begin; t < end; t += 3_600_000) {
      const day = (t - begin) / 86_400_000;
      for (const [key, sim] of m.loops) m.queue.push(digestOf(m, key, sim, new Date(t), BACKFILL_WINDOW_S, day));
      if (m.queue.length >= 500) await flush(m, stats);
    }
    await flush(m, stats);
  });
  console.log(`[simulator] backfill: ${stats.posted} digests stored (${stats.rejected} refused) for ${fleet.length} machines in ${((Date.now() - started) / 1000).toFixed(1)} s`);
  return begin;
}

async function live(fleet: SimMachine[], ageOriginMs: number) {
  console.log(`[simulator] live: ${fleet.length} machines, one digest per loop every ${LIVE_WINDOW_S} s → ${baseUrl}`);
  let windowStart = Math.floor(Date.now() / 60_000) * 60_000;
  let stopping = false;
  process.on("SIGTERM", () => (stopping = true));
  process.on("SIGINT", () => (stopping = true));
  while (!stopping) {
    const windowEnd = windowStart + LIVE_WINDOW_S * 1000;
    while (!stopping && Date.now() < windowEnd) await sleep(Math.min(1000, windowEnd - Date.now()));
    if (stopping) break;
    const stats = { posted: 0, rejected: 0 };
    const day = (windowStart - ageOriginMs) / 86_400_000;
    await inPool(fleet, 8, async (m) => {
      try {
        for (const [key, sim] of m.loops) m.queue.push(digestOf(m, key, sim, new Date(windowStart), LIVE_WINDOW_S, day));
        await flush(m, stats);
        await pullConfig(m);
      } catch (error) {
        console.error(`[simulator] ${m.serial}: ${(error as Error).message}`);
      }
    });
    windowStart = windowEnd;
  }
}

async function main() {
  const fleet = await loadFleet();
  if (backfillArg) {
    await backfill(fleet, parseDuration(backfillArg));
    return;
  }
  const [{ n }] = await getDb().execute<{ n: number }>(sql`select count(*)::int as n from (select 1 from digest limit 1) d`).then((r) => r.rows);
  const origin = Number(n) === 0 ? await backfill(fleet, 30 * 86_400_000) : Date.now() - 30 * 86_400_000;
  await live(fleet, origin);
}

main()
  .catch((error) => {
    console.error("[simulator]", error);
    process.exitCode = 1;
  })
  .finally(() => closeDb());
