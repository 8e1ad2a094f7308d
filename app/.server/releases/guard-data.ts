// The figures the release guard needs, read from digests, acknowledgements and findings.
// The decision itself is pure: app/lib/release/guard.ts.
import { sql } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import type { GuardInput, LoopIae } from "~/lib/release/guard";

/** How far back a loop's pre-release baseline reaches. */
export const BASELINE_SPAN_HOURS = 24;

type Row = { loop_id: string; baseline: number | null; after: number | null };

/**
 * Pilot loops: IAE per second before the release started (the BASELINE_SPAN_HOURS before it)
 * and since, counting only digests whose gainVersion is the version the release offered.
 * Control loops (same template, active machines, not in this release): the same periods, every
 * digest. IAE per second = Σ iae / Σ window seconds.
 */
export async function loadGuardInput(db: Db, { organisationId, releaseId, loopTemplateId, startedAt, wave = 0 }: { organisationId: string; releaseId: string; loopTemplateId: string; startedAt: Date; wave?: number }): Promise<Omit<GuardInput, "settings">> {
  const since = startedAt.toISOString();
  const pilot = await db.execute<Row>(sql`
    select rt.loop_id,
      (select sum(d.iae) / nullif(sum(extract(epoch from d.window_end - d.window_start)), 0) from digest d
        where d.organisation_id = rt.organisation_id and d.loop_id = rt.loop_id
          and d.window_start >= ${since}::timestamptz - make_interval(hours => ${BASELINE_SPAN_HOURS}) and d.window_start < ${since}::timestamptz) as baseline,
      (select sum(d.iae) / nullif(sum(extract(epoch from d.window_end - d.window_start)), 0) from digest d
        where d.organisation_id = rt.organisation_id and d.loop_id = rt.loop_id
          and d.window_start >= ${since}::timestamptz - interval '1 minute' and d.gain_version = rt.version) as after
    from release_target rt
    where rt.organisation_id = ${organisationId} and rt.release_id = ${releaseId}::uuid and rt.wave = ${wave} and rt.include and rt.state = 'applied'`);
  const control = await db.execute<Row>(sql`
    select l.id as loop_id,
      (select sum(d.iae) / nullif(sum(extract(epoch from d.window_end - d.window_start)), 0) from digest d
        where d.organisation_id = l.organisation_id and d.loop_id = l.id
          and d.window_start >= ${since}::timestamptz - make_interval(hours => ${BASELINE_SPAN_HOURS}) and d.window_start < ${since}::timestamptz) as baseline,
      (select sum(d.iae) / nullif(sum(extract(epoch from d.window_end - d.window_start)), 0) from digest d
        where d.organisation_id = l.organisation_id and d.loop_id = l.id and d.window_start >= ${since}::timestamptz - interval '1 minute') as after
    from loop l join machine m on m.organisation_id = l.organisation_id and m.id = l.machine_id and m.status = 'active'
    where l.organisation_id = ${organisationId} and l.template_id = ${loopTemplateId}::uuid
      and not exists (select 1 from release_target rt where rt.organisation_id = l.organisation_id and rt.release_id = ${releaseId}::uuid and rt.loop_id = l.id)`);
  const devices = await db.execute<{ total: number; rejected: number }>(sql`
    select count(distinct rt.machine_id)::int as total,
      count(distinct rt.machine_id) filter (where rt.state = 'rejected')::int as rejected
    from release_target rt
    where rt.organisation_id = ${organisationId} and rt.release_id = ${releaseId}::uuid and rt.wave = ${wave} and rt.include and rt.state in ('applied', 'rejected')`);
  const toLoop = (r: Row): LoopIae => ({ loopId: r.loop_id, baseline: r.baseline == null ? null : Number(r.baseline), after: r.after == null ? null : Number(r.after) });
  return {
    pilot: pilot.rows.map(toLoop),
    control: control.rows.map(toLoop),
    devices: { total: Number(devices.rows[0]?.total ?? 0), rejected: Number(devices.rows[0]?.rejected ?? 0) },
    criticalLoopIds: await listCriticalPilotLoops(db, { organisationId, releaseId, wave, since: startedAt }),
  };
}

/**
 * Pilot loops with an open (or acknowledged) critical finding opened since the release started
 * (findings: app/.server/health/). `config_rejected` findings are left out here: rejections
 * are judged by the reject share, which would mean nothing if one of them held the release.
 */
export async function listCriticalPilotLoops(db: Db, { organisationId, releaseId, wave, since }: { organisationId: string; releaseId: string; wave: number; since: Date }): Promise<string[]> {
  const rows = await db.execute<{ loop_id: string }>(sql`
    select distinct f.loop_id from finding f
    join release_target rt on rt.organisation_id = f.organisation_id and rt.loop_id = f.loop_id
    where f.organisation_id = ${organisationId} and rt.release_id = ${releaseId}::uuid and rt.wave = ${wave} and rt.include
      and f.severity = 'critical' and f.state in ('open', 'acknowledged') and f.kind <> 'config_rejected'
      and f.opened_at >= ${since.toISOString()}::timestamptz`);
  return rows.rows.map((r) => r.loop_id);
}
