// Ingest bench: N simulated devices over keep-alive HTTP on loopback post digests to the real
// app (auth, validation, idempotency) and to a bare node:http + pg baseline inserting the
// same rows (scripts/bench/baseline-ingest.ts), in the same run, batches of 50 and of 1;
// then config pulls answered 304 against a bare node:http server. Prints digests/s, p50/p99
// latency and the ratios, and checks in the database that nothing was lost or duplicated.
//   npm run bench   (env: BENCH_DEVICES=16 BENCH_SECONDS=4 BENCH_ROUNDS=3)
import { execFileSync, spawn, type ChildProcess } from "node:child_process";
import { readdirSync, readFileSync } from "node:fs";
import http from "node:http";
import path from "node:path";
import { fileURLToPath } from "node:url";

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "../..");
const PG_PORT = Number(process.env.BENCH_PG_PORT ?? 54389);
const APP_PORT = Number(process.env.BENCH_APP_PORT ?? 3340);
const BASE_PORT = Number(process.env.BENCH_BASELINE_PORT ?? 3341);
const DEVICES = Number(process.env.BENCH_DEVICES ?? 16);
const SECONDS = Number(process.env.BENCH_SECONDS ?? 4);
const ROUNDS = Number(process.env.BENCH_ROUNDS ?? 3);
/** BENCH_ONLY=50,1,304 runs only those parts (while working on one path). */
const ONLY = new Set((process.env.BENCH_ONLY ?? "50,1,304").split(","));
const DATA = path.join(ROOT, "data/bench-ingest-postgres");
const DATABASE_URL = `postgres://flyball@127.0.0.1:${PG_PORT}/flyball`;
process.env.DATABASE_URL = DATABASE_URL;

const sh = (script: string) => execFileSync("bash", ["-c", `cd ${ROOT} && source scripts/lib/postgres.sh && ${script}`], { stdio: "inherit" });
const children: ChildProcess[] = [];
function start(cmd: string, args: string[], env: Record<string, string>) {
  const child = spawn(cmd, args, { cwd: ROOT, env: { ...process.env, ...env }, stdio: ["ignore", "ignore", "inherit"] });
  children.push(child);
  return child;
}
async function waitFor(url: string) {
  for (let i = 0; i < 240; i++) {
    try {
      await fetch(url);
      return;
    } catch {
      await new Promise((r) => setTimeout(r, 250));
    }
  }
  throw new Error(`timed out waiting for ${url}`);
}

function percentile(sorted: number[], p: number) {
  return sorted.length ? sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))] : NaN;
}

type Cpu = { app: number; base: number; pg: number; client: number };

/** One measured run; runs of the same kind are merged across rounds. */
type Run = { latencies: number[]; digests: number; errors: number; seconds: number; cpu: Cpu };
type Result = { requests: number; digests: number; rps: number; dps: number; p50: number; p99: number; errors: number; cpu: Cpu };

function summarise(runs: Run[]): Result {
  const latencies = runs.flatMap((r) => r.latencies).sort((a, b) => a - b);
  const seconds = runs.reduce((t, r) => t + r.seconds, 0);
  const digests = runs.reduce((t, r) => t + r.digests, 0);
  const cpu = (k: keyof Cpu) => (100 * runs.reduce((t, r) => t + r.cpu[k], 0)) / seconds;
  return {
    requests: latencies.length,
    digests,
    rps: latencies.length / seconds,
    dps: digests / seconds,
    p50: percentile(latencies, 50),
    p99: percentile(latencies, 99),
    errors: runs.reduce((t, r) => t + r.errors, 0),
    cpu: { app: cpu("app"), base: cpu("base"), pg: cpu("pg"), client: cpu("client") },
  };
}

/** CPU seconds used so far by each process of the app, the baseline, PostgreSQL and this one (from /proc). */
function cpuSeconds(): Map<number, { kind: keyof Cpu; seconds: number }> {
  const seen = new Map<number, { kind: keyof Cpu; seconds: number }>();
  for (const pid of readdirSync("/proc").filter((name) => /^\d+$/.test(name))) {
    try {
      const stat = readFileSync(`/proc/${pid}/stat`, "utf8");
      const fields = stat.slice(stat.lastIndexOf(")") + 2).split(" ");
      const seconds = (Number(fields[11]) + Number(fields[12])) / 100;
      const cmd = readFileSync(`/proc/${pid}/cmdline`, "utf8");
      const kind: keyof Cpu | null =
        Number(pid) === process.pid ? "client"
        : stat.includes("(postgres)") ? "pg"
        : cmd.includes("serve.js") && cmd.includes("build-bench") ? "app"
        : cmd.includes("baseline-ingest") && !cmd.includes("tsx/dist/cli") ? "base"
        : null;
      if (kind) seen.set(Number(pid), { kind, seconds });
    } catch {
      // the process ended meanwhile
    }
  }
  return seen;
}

/** CPU seconds each kind used between two readings (a process that ended meanwhile is not counted). */
function cpuBetween(before: ReturnType<typeof cpuSeconds>, after: ReturnType<typeof cpuSeconds>): Cpu {
  const used: Cpu = { app: 0, base: 0, pg: 0, client: 0 };
  for (const [pid, { kind, seconds }] of after) used[kind] += seconds - (before.get(pid)?.seconds ?? 0);
  return used;
}

/** Each worker sends requests back to back on its own keep-alive connection for `seconds`. */
async function drive(port: number, workers: number, seconds: number, make: (worker: number, i: number) => { method: string; path: string; headers: Record<string, string>; body?: string; digests: number } | null, okStatus: number): Promise<Run> {
  const agent = new http.Agent({ keepAlive: true, maxSockets: workers });
  const latencies: number[] = [];
  let digests = 0;
  let errors = 0;
  const until = performance.now() + seconds * 1000;
  const cpu0 = cpuSeconds();
  const t0 = performance.now();
  await Promise.all(
    Array.from({ length: workers }, async (_, w) => {
      for (let i = 0; performance.now() < until; i++) {
        const req = make(w, i);
        if (!req) break;
        const started = performance.now();
        const status = await new Promise<number>((resolve) => {
          const r = http.request({ host: "127.0.0.1", port, method: req.method, path: req.path, headers: req.body ? { ...req.headers, "content-length": Buffer.byteLength(req.body) } : req.headers, agent }, (res) => {
            res.resume();
            res.on("end", () => resolve(res.statusCode ?? 0));
          });
          r.on("error", () => resolve(0));
          r.end(req.body);
        });
        latencies.push(performance.now() - started);
        if (status === okStatus) digests += req.digests;
        else errors += 1;
      }
    }),
  );
  const elapsed = (performance.now() - t0) / 1000;
  const cpu1 = cpuSeconds();
  agent.destroy();
  const cpu = cpuBetween(cpu0, cpu1);
  return { latencies, digests, errors, seconds: elapsed, cpu };
}

async function main() {
  console.log(`Fresh PostgreSQL on ${PG_PORT}, app on ${APP_PORT}, baseline on ${BASE_PORT}; ${DEVICES} devices, ${ROUNDS} rounds of ${SECONDS} s per run.`);
  sh(`pg_stop ${DATA}; rm -rf ${DATA}; pg_ensure_running ${DATA} ${PG_PORT} off`);
  const { migrateDatabase } = await import("../lib/migrate-database");
  await migrateDatabase(DATABASE_URL);
  const { getDb, closeDb } = await import("~/.server/db/client");
  const { sql } = await import("drizzle-orm");
  const { createTeam, createTestFleet } = await import("../../tests/factories");
  const { createDeviceIdentity, DeviceClient, sampleDigest } = await import("../simulator/device-client");
  const db = getDb();
  const team = await createTeam(db, ["owner"]);
  const orgId = team.organisation.id;
  const fleet = await createTestFleet(db, { organisationId: orgId, machinesPerSite: DEVICES });
  const appMachines = fleet.machines.slice(0, DEVICES);
  const baseMachines = fleet.machines.slice(DEVICES, DEVICES * 2);
  const loopRows = await db.execute<{ id: string; machine_id: string; key: string }>(sql`select id, machine_id, key from loop where organisation_id = ${orgId}`);
  const loopOf = (machineId: string) => loopRows.rows.filter((l) => l.machine_id === machineId);

  console.log("Building the app…");
  execFileSync("node_modules/.bin/react-router", ["build"], { cwd: ROOT, env: { ...process.env, FLYBALL_BUILD_DIR: "build-bench" }, stdio: "ignore" });
  const appEnv = { NODE_ENV: "production", PORT: String(APP_PORT), HOST: "127.0.0.1", DATABASE_URL, BETTER_AUTH_SECRET: "bench-secret-not-for-production-0123456789abcdef", BETTER_AUTH_URL: `http://127.0.0.1:${APP_PORT}`, DEVICE_RATE_PER_SECOND: "1000000000", DEVICE_RATE_BURST: "1000000000" };
  start("node", [...(process.env.BENCH_PROFILE ? ["--cpu-prof", `--cpu-prof-dir=${process.env.BENCH_PROFILE}`] : []), "scripts/serve.js", "build-bench/server/index.js"], appEnv);
  start("node_modules/.bin/tsx", ["scripts/bench/baseline-ingest.ts"], { DATABASE_URL, BASELINE_PORT: String(BASE_PORT) });
  await waitFor(`http://127.0.0.1:${APP_PORT}/api/v1/openapi.json`);
  await waitFor(`http://127.0.0.1:${BASE_PORT}/static-config`);

  const clients: InstanceType<typeof DeviceClient>[] = [];
  for (const m of appMachines) {
    const c = new DeviceClient(`http://127.0.0.1:${APP_PORT}`, await createDeviceIdentity());
    const r = await c.enrol(m.enrolmentCode);
    if (r.status !== 201) throw new Error(`enrol failed ${r.status}`);
    clients.push(c);
  }
  // Warm up both servers (JIT, prepared statements, key caches).
  const seqs = new Map<string, number>();
  const nextSeq = (key: string) => {
    const n = (seqs.get(key) ?? 0) + 1;
    seqs.set(key, n);
    return n;
  };
  const base = Date.now() - 80 * 86_400_000;
  const digestFor = (machineId: string, loopKey: string, loopId: string) => {
    const seq = nextSeq(`${machineId}:${loopKey}`);
    return { ...sampleDigest(loopKey, seq, new Date(base + seq * 60_000)), loopId };
  };
  const tokensFor = async (count: number) => Promise.all(clients.map(async (c) => Promise.all(Array.from({ length: count }, () => c.token({ lifetime: 300 })))));

  // App and baseline take turns, ROUNDS times each, so that neither gains from running on a
  // smaller table, a cooler machine or a quieter neighbour.
  const runs: Record<string, Run[]> = {};
  const record = (key: string, run: Run) => (runs[key] ??= []).push(run);
  const expected: Record<string, number> = { app: 0, base: 0 };
  type Req = { method: string; path: string; headers: Record<string, string>; body?: string; digests: number };
  for (const batch of [50, 1].filter((b) => ONLY.has(String(b)))) {
    for (let round = 0; round < ROUNDS; round++) {
      for (const [label, port] of [["app", APP_PORT], ["base", BASE_PORT]] as const) {
        const tokens = label === "app" ? await tokensFor(Math.ceil(((batch === 1 ? 3000 : 600) * SECONDS) / 8)) : [];
        const machines = label === "app" ? appMachines : baseMachines;
        const run = await drive(port, DEVICES, SECONDS, (w, i): Req | null => {
          const m = machines[w];
          const loops = loopOf(m.id);
          const digests = Array.from({ length: batch }, (_, k) => digestFor(m.id, loops[k % loops.length].key, loops[k % loops.length].id));
          if (label === "app") {
            const token = tokens[w][i];
            if (!token) return null;
            return { method: "POST", path: "/api/v1/device/digests", headers: { "content-type": "application/json", authorization: `Bearer ${token}` }, body: JSON.stringify({ digests: digests.map(({ loopId: _, ...d }) => d) }), digests: batch };
          }
          return { method: "POST", path: "/", headers: { "content-type": "application/json" }, body: JSON.stringify({ organisationId: orgId, digests }), digests: batch };
        }, 200);
        record(`${label}-${batch}`, run);
        expected[label] += run.digests;
      }
    }
  }
  // Config pulls answered 304: the app; the baseline after the same loop lookup; the baseline
  // after checking the device token's signature with jose and nothing else (the least any
  // implementation of the device API must do); and a bare node:http answer.
  if (ONLY.has("304")) {
    const etags: string[] = [];
    for (const c of clients) etags.push((await c.getConfig()).headers.get("etag")!);
    for (let round = 0; round < ROUNDS; round++) {
      const configTokens = await tokensFor(Math.ceil((3000 * SECONDS) / 8));
      record("app-304", await drive(APP_PORT, DEVICES, SECONDS, (w, i) => (configTokens[w][i] ? { method: "GET", path: "/api/v1/device/config", headers: { authorization: `Bearer ${configTokens[w][i]}`, "if-none-match": etags[w] }, digests: 0 } : null), 304));
      record("base-304", await drive(BASE_PORT, DEVICES, SECONDS, (w) => ({ method: "GET", path: "/", headers: { "x-organisation": orgId, "x-machine": appMachines[w].id }, digests: 0 }), 304));
      const verifyTokens = await tokensFor(Math.ceil((6000 * SECONDS) / 8));
      record("verify-304", await drive(BASE_PORT, DEVICES, SECONDS, (w, i) => (verifyTokens[w][i] ? { method: "GET", path: "/verified-config", headers: { authorization: `Bearer ${verifyTokens[w][i]}` }, digests: 0 } : null), 304));
      record("bare-304", await drive(BASE_PORT, DEVICES, SECONDS, () => ({ method: "GET", path: "/static-config", headers: {}, digests: 0 }), 304));
    }
  }
  const results = Object.fromEntries(Object.entries(runs).map(([k, r]) => [k, summarise(r)]));

  await new Promise((r) => setTimeout(r, 500));
  const count = async (ids: string[]) => Number((await db.execute<{ n: number }>(sql`select count(*)::int as n from digest d join loop l on l.organisation_id = d.organisation_id and l.id = d.loop_id where l.machine_id in (${sql.join(ids.map((id) => sql`${id}::uuid`), sql`, `)})`)).rows[0].n);
  const stored = { app: await count(appMachines.map((m) => m.id)), base: await count(baseMachines.map((m) => m.id)) };
  const dupes = Number((await db.execute<{ n: number }>(sql`select count(*)::int as n from (select loop_id, seq from digest where organisation_id = ${orgId} group by 1, 2 having count(*) > 1) x`)).rows[0].n);

  const f = (n: number, d = 0) => n.toFixed(d).padStart(9);
  console.log("\n                       req/s  digests/s   p50 ms   p99 ms  errors   CPU % of one core: server  postgres  client");
  for (const [k, r] of Object.entries(results)) {
    const server = k.startsWith("app") ? r.cpu.app : r.cpu.base;
    console.log(`${k.padEnd(14)} ${f(r.rps)} ${f(r.dps)} ${f(r.p50, 2)} ${f(r.p99, 2)} ${f(r.errors)}                     ${f(server)} ${f(r.cpu.pg)} ${f(r.cpu.client)}`);
  }
  const ratio = (a: string, b: string, field: "dps" | "rps") => (results[a] && results[b] ? results[a][field] / results[b][field] : NaN);
  const r50 = ratio("app-50", "base-50", "dps");
  const r1 = ratio("app-1", "base-1", "dps");
  const r304 = ratio("app-304", "bare-304", "rps");
  const r304q = ratio("app-304", "base-304", "rps");
  const r304v = ratio("app-304", "verify-304", "rps");
  const rVerify = ratio("verify-304", "bare-304", "rps");
  console.log(`\nbatch 50: app/baseline digests/s = ${r50.toFixed(2)} (target ≥ 0.7) ${r50 >= 0.7 ? "PASS" : "MISS"}`);
  console.log(`batch 1:  app/baseline digests/s = ${r1.toFixed(2)} (target ≥ 0.5) ${r1 >= 0.5 ? "PASS" : "MISS"}`);
  console.log(`config 304: app/bare node:http req/s = ${r304.toFixed(2)} (target ≥ 0.5) ${r304 >= 0.5 ? "PASS" : "MISS"}`);
  console.log(`            app/baseline with the same loop lookup = ${r304q.toFixed(2)}; app/baseline that only checks the token with jose = ${r304v.toFixed(2)} (that baseline/bare = ${rVerify.toFixed(2)})`);
  console.log(`stored: app ${stored.app} of ${expected.app} acknowledged, baseline ${stored.base} of ${expected.base}; (loop, seq) duplicates: ${dupes} ${stored.app === expected.app && dupes === 0 ? "PASS" : "MISS"}`);
  await closeDb();
}

main()
  .catch((error) => {
    console.error(error);
    process.exitCode = 1;
  })
  .finally(async () => {
    for (const c of children) c.kill("SIGTERM");
    await Promise.all(children.map((c) => new Promise((r) => (c.exitCode !== null ? r(null) : c.on("exit", r)))));
    sh(`pg_stop ${DATA}`);
  });
