// Keeps each loop's health summary (band, score, reasons, last digest time) in step with its
// digests. Run by the loop-health evaluation job (~/.server/health/evaluate.ts), which ingest
// queues per machine through pg-boss (~/.server/health/queue.ts).
import { sql } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import type { HealthThresholds } from "~/.server/db/schema";
import { assessLoopHealth } from "~/lib/health";

/** Digests within this span before a loop's latest one feed its assessment. */
const ASSESS_SPAN_MS = 3_600_000;

type Row = {
  loop_id: string;
  thresholds: HealthThresholds;
  window_start: Date | null;
  window_end: Date | null;
  samples: number | null;
  err_rms: number | null;
  sat_high_frac: number | null;
  sat_low_frac: number | null;
  int_clamp_frac: number | null;
  osc_count: number | null;
};

export async function refreshMachineHealth(db: Db, { organisationId, machineId, now = new Date() }: { organisationId: string; machineId: string; now?: Date }) {
  const result = await db.execute<Row>(sql`
    with l as (
      select l.id, t.thresholds,
             (select max(d.window_start) from digest d where d.organisation_id = l.organisation_id and d.loop_id = l.id) as latest
      from loop l join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
      where l.organisation_id = ${organisationId} and l.machine_id = ${machineId}::uuid
    )
    select l.id as loop_id, l.thresholds, d.window_start, d.window_end, d.samples, d.err_rms, d.sat_high_frac, d.sat_low_frac, d.int_clamp_frac, d.osc_count
    from l left join digest d on d.organisation_id = ${organisationId} and d.loop_id = l.id
      and d.window_start >= l.latest - make_interval(secs => ${ASSESS_SPAN_MS / 1000}) and d.window_start <= l.latest`);
  const byLoop = new Map<string, { thresholds: HealthThresholds; digests: Parameters<typeof assessLoopHealth>[0] }>();
  for (const r of result.rows) {
    let entry = byLoop.get(r.loop_id);
    if (!entry) byLoop.set(r.loop_id, (entry = { thresholds: r.thresholds, digests: [] }));
    if (r.window_start && r.window_end) {
      entry.digests.push({
        windowStart: new Date(r.window_start),
        windowEnd: new Date(r.window_end),
        samples: Number(r.samples),
        errRms: Number(r.err_rms),
        satHighFrac: Number(r.sat_high_frac),
        satLowFrac: Number(r.sat_low_frac),
        intClampFrac: Number(r.int_clamp_frac),
        oscCount: Number(r.osc_count),
      });
    }
  }
  for (const [loopId, entry] of byLoop) {
    if (entry.digests.length === 0) continue;
    const last = entry.digests.reduce((a, d) => (d.windowEnd > a ? d.windowEnd : a), entry.digests[0].windowEnd);
    // Assess as of the last digest; silence is judged at read time against the clock.
    const assessment = assessLoopHealth(entry.digests, entry.thresholds, new Date(Math.min(now.getTime(), last.getTime())));
    await db.execute(sql`
      update loop set health_band = ${assessment.band}, health_score = ${assessment.score},
        health_reasons = ${JSON.stringify(assessment.reasons)}::jsonb, last_digest_at = ${last.toISOString()}::timestamptz
      where organisation_id = ${organisationId} and id = ${loopId}::uuid`);
  }
}
