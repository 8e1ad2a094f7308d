// Sending pg-boss jobs from the app process (scripts/worker.ts runs them). One client, started
// on first use, that neither supervises nor schedules: the worker does both.
import PgBoss from "pg-boss";
import { env } from "~/.server/env";

let pending: Promise<PgBoss> | undefined;
const created = new Set<string>();

function boss(): Promise<PgBoss> {
  if (!pending) {
    pending = (async () => {
      const instance = new PgBoss({ connectionString: env().DATABASE_URL, max: 2, supervise: false, schedule: false });
      instance.on("error", (error) => console.error("[jobs]", error));
      await instance.start();
      return instance;
    })().catch((error) => {
      pending = undefined;
      throw error;
    });
  }
  return pending;
}

export type QueueOptions = { policy?: "standard" | "stately"; retryLimit?: number; retryDelay?: number; retryBackoff?: boolean };

/**
 * Put a job on its queue (created on first use, as the worker does). With a `stately` queue and
 * a singleton key, a job still waiting for the same key absorbs this one (answers null).
 */
export async function enqueue(name: string, payload: object, { queue, singletonKey }: { queue?: QueueOptions; singletonKey?: string } = {}): Promise<string | null> {
  const instance = await boss();
  if (!created.has(name)) {
    await instance.createQueue(name, { name, ...queue });
    created.add(name);
  }
  return instance.send(name, payload, singletonKey ? { singletonKey } : {});
}
