// The fleet overview and one loop's health, read only from the loop rows (band, score, reasons
// kept by the evaluation job), the stored figures, open findings and the daily snapshots:
// never from raw digests.
import { sql, type SQL } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import type { SiteScope } from "~/.server/fleet/scope";
import type { BandCounts, FindingKind, FindingSeverity, LoopHealth, Overview, OverviewQuery } from "~/lib/health/api-types";
import { BAND_RANK, bandOfRank, DEFAULT_SILENT_AFTER_S, HEALTH_BANDS, type HealthBand } from "~/lib/health/assess";
import { findingSettingsOf } from "~/lib/health/finding-rules";
import type { LoopHealthFigures } from "~/lib/health/figures";
import { machineScopeSql, notFound, requireUuid } from "./findings";
import { TREND_DAYS } from "./evaluate";

/** A loop's band rank now: silent past the template's silence time, else the stored band (as fleet/machines.ts). */
const LOOP_RANK = sql`case
  when l.last_digest_at is null or l.last_digest_at < now() - make_interval(secs => coalesce((t.thresholds->>'silentAfter')::float8, ${DEFAULT_SILENT_AFTER_S}::float8)) then ${BAND_RANK.silent}::int
  when l.health_band = 'act' then ${BAND_RANK.act}::int when l.health_band = 'watch' then ${BAND_RANK.watch}::int when l.health_band = 'steady' then ${BAND_RANK.steady}::int
  else ${BAND_RANK.silent}::int end`;

const emptyCounts = (): BandCounts => ({ steady: 0, watch: 0, act: 0, silent: 0 });

function filters(scope: SiteScope, query: OverviewQuery): SQL {
  const where: SQL[] = [sql`m.organisation_id = ${scope.organisationId}`, sql`m.status = 'active'`, machineScopeSql(scope)];
  if (query.siteId) where.push(sql`m.site_id = ${query.siteId}::uuid`);
  if (query.modelId) where.push(sql`m.model_id = ${query.modelId}::uuid`);
  if (query.customerId) where.push(sql`s.customer_id = ${query.customerId}::uuid`);
  return sql.join(where, sql` and `);
}

const MACHINES = sql`machine m join site s on s.organisation_id = m.organisation_id and s.id = m.site_id`;

/** How many machines the attention list names at most. */
export const ATTENTION_LIMIT = 20;

export async function getOverview(db: Db, scope: SiteScope, query: OverviewQuery): Promise<Overview> {
  const where = filters(scope, query);
  const since = new Date(Date.now() - (TREND_DAYS - 1) * 86_400_000).toISOString().slice(0, 10);
  // One round trip: the loop ranks once (CTE), then each aggregate as a JSON column.
  const [row] = (
    await db.execute<{ loops: { rank: number; n: number }[] | null; machines: { rank: number; n: number }[] | null; findings: { kind: FindingKind; severity: FindingSeverity; n: number }[] | null; attention: { machineId: string; serial: string; rank: number; score: number | null; reason: string | null; loopKey: string | null }[] | null; trend: { day: string; band: HealthBand; n: number }[] | null }>(sql`
      with ranked as materialized (
        select m.id as machine_id, m.serial, l.id as loop_id, l.key, l.health_score, l.health_reasons, l.last_digest_at, ${LOOP_RANK} as rank
        from ${MACHINES}
        join loop l on l.organisation_id = m.organisation_id and l.machine_id = m.id
        join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
        where ${where}
      ), per_machine as (
        select distinct on (machine_id) machine_id, serial, rank, key, health_score, health_reasons, last_digest_at
        from ranked order by machine_id, rank desc, health_score asc nulls last, key
      )
      select
        (select json_agg(x) from (select rank, count(*)::int as n from ranked group by rank) x) as loops,
        (select json_agg(x) from (select rank, count(*)::int as n from per_machine group by rank) x) as machines,
        (select json_agg(x) from (
          select f.kind, f.severity, count(*)::int as n
          from finding f join ${MACHINES} on m.organisation_id = f.organisation_id and m.id = f.machine_id
          where f.organisation_id = ${scope.organisationId} and f.state in ('open', 'acknowledged') and ${where}
          group by f.kind, f.severity) x) as findings,
        (select json_agg(x) from (
          select machine_id as "machineId", serial, rank, health_score as score, key as "loopKey",
                 case when rank = ${BAND_RANK.silent}::int then null else health_reasons->>0 end as reason
          from per_machine where rank >= ${BAND_RANK.watch}::int
          -- act, then watch, then silent: a fleet with many unwired machines still lists the failing ones
          order by case rank when ${BAND_RANK.act}::int then 0 when ${BAND_RANK.watch}::int then 1 else 2 end, health_score asc nulls first, serial limit ${ATTENTION_LIMIT}) x) as attention,
        (select json_agg(x) from (
          select to_char(d.day, 'YYYY-MM-DD') as day, d.band, count(*)::int as n
          from loop_health_day d
          join loop l on l.organisation_id = d.organisation_id and l.id = d.loop_id
          join ${MACHINES} on m.organisation_id = l.organisation_id and m.id = l.machine_id
          where d.organisation_id = ${scope.organisationId} and d.day >= ${since}::date and ${where}
          group by d.day, d.band) x) as trend`)
  ).rows;

  const loops = emptyCounts();
  for (const r of row?.loops ?? []) loops[bandOfRank(r.rank)] += r.n;
  const machines = emptyCounts();
  for (const r of row?.machines ?? []) machines[bandOfRank(r.rank)] += r.n;
  const byKind: Overview["openFindings"]["byKind"] = {};
  const bySeverity: Overview["openFindings"]["bySeverity"] = {};
  for (const f of row?.findings ?? []) {
    byKind[f.kind] = (byKind[f.kind] ?? 0) + f.n;
    bySeverity[f.severity] = (bySeverity[f.severity] ?? 0) + f.n;
  }
  const attention = (row?.attention ?? []).map((a) => {
    const band = bandOfRank(a.rank);
    return {
      machineId: a.machineId,
      serial: a.serial,
      band,
      score: band === "silent" ? 0 : (a.score ?? 0),
      reason: band === "silent" ? `${a.loopKey ?? "A loop"}: no digest received recently.` : `${a.loopKey}: ${a.reason ?? "health below steady."}`,
    };
  });
  const days = new Map<string, { day: string } & BandCounts>();
  for (let i = TREND_DAYS - 1; i >= 0; i--) {
    const day = new Date(Date.now() - i * 86_400_000).toISOString().slice(0, 10);
    days.set(day, { day, ...emptyCounts() });
  }
  for (const t of row?.trend ?? []) {
    const entry = days.get(t.day);
    if (entry && HEALTH_BANDS.includes(t.band)) entry[t.band] += t.n;
  }
  return { loops, machines, openFindings: { byKind, bySeverity }, attention, trend: [...days.values()] };
}

type LoopHealthRow = {
  id: string;
  site_id: string;
  rank: number;
  health_score: number | null;
  health_reasons: string[];
  last_digest_at: Date | string | null;
  thresholds: Record<string, number>;
  figures: LoopHealthFigures | null;
};

export async function getLoopHealth(db: Db, scope: SiteScope, loopId: string): Promise<LoopHealth> {
  const id = requireUuid(loopId, "loop");
  const [row] = (
    await db.execute<LoopHealthRow>(sql`
      select l.id, m.site_id, ${LOOP_RANK} as rank, l.health_score, l.health_reasons, l.last_digest_at, t.thresholds, h.figures
      from loop l
      join machine m on m.organisation_id = l.organisation_id and m.id = l.machine_id
      join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
      left join loop_health h on h.organisation_id = l.organisation_id and h.loop_id = l.id
      where l.organisation_id = ${scope.organisationId} and l.id = ${id}::uuid and ${machineScopeSql(scope)}`)
  ).rows;
  if (!row) throw notFound("loop");
  const band = bandOfRank(Number(row.rank));
  const f = row.figures;
  const settings = findingSettingsOf(row.thresholds);
  const time = (v: unknown) => (v === null || v === undefined ? null : new Date(v as string).toISOString());
  return {
    loopId: row.id,
    band,
    score: band === "silent" ? 0 : Number(row.health_score ?? 0),
    reasons: band === "silent" ? ["No digest received recently."] : row.health_reasons,
    lastDigestAt: time(row.last_digest_at),
    saturation: {
      share24h: f?.saturation.share24h ?? null,
      share7d: f?.saturation.share7d ?? null,
      slopePerDay: f?.saturation.slopePerDay ?? null,
      projectedActAt: time(f?.saturation.projectedActAt),
    },
    windup: { share24h: f?.windup.share24h ?? null, pinnedShare24h: f?.windup.pinnedShare24h ?? null },
    oscillation: { detectionsPerHour: f?.oscillation.detectionsPerHour ?? null, limitPerHour: f?.oscillation.limitPerHour ?? row.thresholds.oscillationPerHour ?? null },
    drift: f
      ? { state: f.drift.state, baselineMean: f.drift.baselineMean, baselineStd: f.drift.baselineStd, cusumHigh: f.drift.cusumHigh, cusumLow: f.drift.cusumLow, limit: f.drift.limit, sinceGainVersion: f.drift.sinceGainVersion }
      : { state: "learning", baselineMean: null, baselineStd: null, cusumHigh: null, cusumLow: null, limit: settings.driftH, sinceGainVersion: null },
  };
}
