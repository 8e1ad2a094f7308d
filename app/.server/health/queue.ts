// Sending loop-health jobs from the app process (the worker runs them: scripts/worker.ts).
// Ingest asks for a machine's evaluation after each stored post; this module coalesces those
// requests in process (at most one send per machine per EVALUATE_MIN_INTERVAL_MS, the last
// request never dropped) and the queue coalesces them across processes: the queues are
// `stately`, so at most one job per machine (or organisation) waits at any time.
import PgBoss from "pg-boss";
import { env } from "~/.server/env";

export const EVALUATE_MACHINE_JOB = "health.evaluate-machine";
export const DELIVER_ALERTS_JOB = "health.deliver-alerts";

/** Queues whose jobs carry a singleton key: one waiting job per key (pg-boss `stately`). */
export const STATELY_QUEUES = [EVALUATE_MACHINE_JOB, DELIVER_ALERTS_JOB] as const;

/**
 * A machine posting continuously is evaluated at most this often: digests are minute windows, and
 * one worker evaluates about ten machines a second (scripts/bench/overview-bench.ts), so a fleet
 * of 500 machines posting without pause is judged about once a minute each.
 */
export const EVALUATE_MIN_INTERVAL_MS = 60_000;
/** Seconds an evaluation waits after it is asked for, so a burst of posts costs one. */
export const EVALUATE_DELAY_S = 3;
/** Seconds the alert job waits after a finding opens, so a burst goes out as one summary. */
export const ALERT_DELAY_S = 30;

let boss: Promise<PgBoss> | undefined;

/** A send-only pg-boss in this process (no maintenance, no schedules: the worker does those). */
export function getJobSender(): Promise<PgBoss> {
  if (!boss) {
    boss = (async () => {
      const instance = new PgBoss({ connectionString: env().DATABASE_URL, max: 2, supervise: false, schedule: false });
      instance.on("error", (error) => console.error("[jobs]", error));
      await instance.start();
      for (const name of STATELY_QUEUES) await instance.createQueue(name, { name, policy: "stately" });
      return instance;
    })();
    boss.catch(() => (boss = undefined));
  }
  return boss;
}

export async function sendEvaluateMachine(organisationId: string, machineId: string, startAfter = EVALUATE_DELAY_S): Promise<void> {
  const sender = await getJobSender();
  await sender.send(EVALUATE_MACHINE_JOB, { organisationId, machineId }, { singletonKey: `${organisationId}:${machineId}`, startAfter, retryLimit: 3, retryDelay: 10 });
}

export async function sendDeliverAlerts(organisationId: string, startAfter = ALERT_DELAY_S): Promise<void> {
  const sender = await getJobSender();
  await sender.send(DELIVER_ALERTS_JOB, { organisationId }, { singletonKey: organisationId, startAfter, retryLimit: 5, retryDelay: 30, retryBackoff: true });
}

const requests = new Map<string, { last: number; timer?: ReturnType<typeof setTimeout> }>();

/** Ask for a machine's health evaluation soon (called by ingest; never throws, never waits). */
export function requestHealthEvaluation(organisationId: string, machineId: string): void {
  const key = `${organisationId}:${machineId}`;
  let entry = requests.get(key);
  if (!entry) {
    if (requests.size > 100_000) requests.clear();
    requests.set(key, (entry = { last: 0 }));
  }
  if (entry.timer) return;
  const send = () => {
    entry.last = Date.now();
    sendEvaluateMachine(organisationId, machineId).catch((error) => console.error("health evaluation not queued", error));
  };
  const wait = entry.last + EVALUATE_MIN_INTERVAL_MS - Date.now();
  if (wait <= 0) return send();
  entry.timer = setTimeout(() => {
    entry.timer = undefined;
    send();
  }, wait);
  entry.timer.unref?.();
}
