// The background worker (started by `npm start`): pg-boss on the app's PostgreSQL, running
// the jobs listed in app/.server/jobs/definitions.ts.
import PgBoss from "pg-boss";
import { closeDb, getDb } from "~/.server/db/client";
import { env } from "~/.server/env";
import { JOBS } from "~/.server/jobs/definitions";

const boss = new PgBoss({ connectionString: env().DATABASE_URL, max: 4 });
boss.on("error", (error) => console.error("[worker]", error));
await boss.start();
for (const job of JOBS) {
  await boss.createQueue(job.name, { name: job.name, ...(job.policy ? { policy: job.policy } : {}), ...job.retry });
  await boss.work(job.name, { ...job.work }, async (jobs) => {
    for (const j of jobs) {
      const payload = job.schema.safeParse(j.data ?? {});
      if (!payload.success) throw new Error(`${job.name}: invalid payload`);
      await job.handler(getDb(), payload.data as never);
    }
  });
  if (job.cron) await boss.schedule(job.name, job.cron, {}, { tz: "UTC" });
}
// Make sure partitions exist right away, not only at the next scheduled run.
await boss.send("fleet.ensure-digest-partitions", {});
console.log(`[worker] running ${JOBS.length} job kinds`);

const stop = async () => {
  await boss.stop({ graceful: true, timeout: 10_000 });
  await closeDb();
  process.exit(0);
};
process.on("SIGTERM", stop);
process.on("SIGINT", stop);
