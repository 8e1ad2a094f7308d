// The evaluation job's work for one machine (DEVELOPERS.md, "Loop health"): the loops' band and
// score (fleet/health.ts), their figures over the hourly rollups, the findings that follow from
// them (opened, updated, auto-resolved), and the daily snapshots of the 30-day trend.
//
// The series judged is the loop's hourly rollups (loop_hour), one window per hour: the same
// digests give the same rollups in any arrival order (exact numeric sums), so the same findings.
// Oscillation alone reads raw digests, and only within its supervision time (50·Tu, at most 24 h):
// Hägglund's count is per window.
import { sql } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import type { HealthThresholds } from "~/.server/db/schema";
import { refreshMachineHealth } from "~/.server/fleet/health";
import type { FindingEvidence, FindingKind, FindingSeverity } from "~/lib/health/api-types";
import { bandForScore, scoreHealthSignals, supervisionSeconds, type HealthBand } from "~/lib/health/assess";
import { assessDrift } from "~/lib/health/drift";
import { findingSettingsOf, judgeLoop, SEVERITY_RANK, type FindingJudgement, type TemplateHealthSettings } from "~/lib/health/finding-rules";
import { loopHealthFigures, type LoopHealthFigures } from "~/lib/health/figures";
import { assessOscillation } from "~/lib/health/oscillation";
import { DAY_MS, HOUR_MS, type HealthDigest } from "~/lib/health/series";

/** Days of hourly rollups the figures read (drift's baseline lies within them; the trend uses 14). */
export const EVALUATION_DAYS = 30;
/** Days of daily snapshots kept current (the overview's trend). */
export const TREND_DAYS = 30;

type LoopRow = { id: string; key: string; thresholds: HealthThresholds & Partial<TemplateHealthSettings>; last_digest_at: Date | string | null };
type HourRow = {
  loop_id: string;
  hour: Date | string;
  samples: number;
  seconds: number;
  iae: number;
  sat: number;
  clamp: number;
  pinned: number;
  err2: number;
  osc: number;
  last_window_end: Date | string;
  gain_version: number;
};
type OpenFinding = { id: string; loop_id: string; kind: FindingKind; severity: FindingSeverity; state: string; clear_since: Date | string | null };

const asDate = (v: Date | string) => (v instanceof Date ? v : new Date(v));

/** One hour of rollup as a window of the series the pure analytics read. */
function hourAsDigest(r: HourRow): HealthDigest {
  const start = asDate(r.hour);
  const samples = Number(r.samples);
  return {
    windowStart: start,
    windowEnd: new Date(start.getTime() + Math.min(Number(r.seconds), HOUR_MS / 1000) * 1000),
    samples,
    iae: Number(r.iae),
    satHighFrac: samples > 0 ? Number(r.sat) / samples : 0,
    satLowFrac: 0,
    intClampFrac: samples > 0 ? Number(r.clamp) / samples : 0,
    oscCount: Number(r.osc),
    gainVersion: Number(r.gain_version),
  };
}

export type EvaluationResult = { loops: number; opened: number; escalated: number; resolved: number; alertsPending: boolean };

export async function evaluateMachineHealth(db: Db, { organisationId, machineId, now = new Date() }: { organisationId: string; machineId: string; now?: Date }): Promise<EvaluationResult> {
  await refreshMachineHealth(db, { organisationId, machineId, now });
  const loops = (
    await db.execute<LoopRow>(sql`
      select l.id, l.key, t.thresholds, l.last_digest_at
      from loop l join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
      where l.organisation_id = ${organisationId} and l.machine_id = ${machineId}::uuid order by l.key`)
  ).rows;
  const result: EvaluationResult = { loops: loops.length, opened: 0, escalated: 0, resolved: 0, alertsPending: false };
  if (loops.length === 0) return result;
  const loopIds = sql`array[${sql.join(loops.map((l) => sql`${l.id}::uuid`), sql`, `)}]`;
  const from = new Date(now.getTime() - EVALUATION_DAYS * DAY_MS);
  const hours = (
    await db.execute<HourRow>(sql`
      select loop_id, hour, samples, seconds::float8 as seconds, iae::float8 as iae, sat_samples::float8 as sat, clamp_samples::float8 as clamp,
             pinned_samples::float8 as pinned, err2_samples::float8 as err2, osc_count as osc, last_window_end, gain_version
      from loop_hour where organisation_id = ${organisationId} and loop_id = any(${loopIds}) and hour >= ${from.toISOString()}::timestamptz and hour <= ${now.toISOString()}::timestamptz
      order by loop_id, hour`)
  ).rows;
  const byLoop = new Map<string, HourRow[]>();
  for (const h of hours) (byLoop.get(h.loop_id) ?? byLoop.set(h.loop_id, []).get(h.loop_id)!).push(h);

  // Raw windows for oscillation, within the longest supervision time of these loops (≤ 24 h).
  const tsupS = Math.min(86_400, Math.max(...loops.map((l) => supervisionSeconds(l.thresholds.oscillationPerHour) || 0), 0));
  const raw = (
    await db.execute<{ loop_id: string; window_start: Date | string; window_end: Date | string; osc_count: number }>(sql`
      select loop_id, window_start, window_end, osc_count from digest
      where organisation_id = ${organisationId} and loop_id = any(${loopIds})
        and window_start >= ${new Date(now.getTime() - tsupS * 1000 - HOUR_MS).toISOString()}::timestamptz and window_start <= ${now.toISOString()}::timestamptz`)
  ).rows;
  const rawByLoop = new Map<string, { windowStart: Date; windowEnd: Date; oscCount: number }[]>();
  for (const r of raw) (rawByLoop.get(r.loop_id) ?? rawByLoop.set(r.loop_id, []).get(r.loop_id)!).push({ windowStart: asDate(r.window_start), windowEnd: asDate(r.window_end), oscCount: Number(r.osc_count) });

  const evaluations = loops.map((l) => {
    const settings = findingSettingsOf(l.thresholds);
    const rows = byLoop.get(l.id) ?? [];
    const series = rows.map(hourAsDigest);
    const figureSettings = { saturationAct: l.thresholds.saturationAct, oscillationPerHour: l.thresholds.oscillationPerHour, driftBaselineWindows: settings.driftBaselineWindows, driftK: settings.driftK, driftH: settings.driftH };
    const figures: LoopHealthFigures = loopHealthFigures(series, figureSettings, now);
    // The pinned share is a per-window minimum: summed per hour in the rollup, not recomputable from hourly means.
    const dayRows = rows.filter((r) => asDate(r.last_window_end).getTime() > now.getTime() - DAY_MS);
    const daySamples = dayRows.reduce((a, r) => a + Number(r.samples), 0);
    figures.windup.pinnedShare24h = daySamples > 0 ? dayRows.reduce((a, r) => a + Number(r.pinned), 0) / daySamples : null;
    const osc = assessOscillation(rawByLoop.get(l.id) ?? [], l.thresholds.oscillationPerHour, now);
    figures.oscillation = { detectionsPerHour: osc.detectionsPerHour, limitPerHour: osc.limitPerHour };
    const drift = assessDrift(series, now, { baselineWindows: settings.driftBaselineWindows, k: settings.driftK, h: settings.driftH });
    const rollupLast = rows.reduce<number | null>((a, r) => Math.max(a ?? 0, asDate(r.last_window_end).getTime()), null);
    const loopLast = l.last_digest_at ? asDate(l.last_digest_at).getTime() : null;
    const lastMs = rollupLast === null ? loopLast : loopLast === null ? rollupLast : Math.max(rollupLast, loopLast);
    const lastDigestEnd = lastMs === null ? null : new Date(Math.min(lastMs, now.getTime()));
    const judgements = judgeLoop({ figures, driftFirstSignalAt: drift.firstSignal?.at ?? null, thresholds: l.thresholds, settings, lastDigestEnd, now });
    return { loop: l, settings, figures, judgements, rows };
  });

  await db.transaction(async (tx) => {
    const open = (
      await tx.execute<OpenFinding>(sql`
        select id, loop_id, kind, severity, state, clear_since from finding
        where organisation_id = ${organisationId} and loop_id = any(${loopIds}) and state in ('open', 'acknowledged')
        for update`)
    ).rows;
    for (const e of evaluations) {
      for (const j of e.judgements) {
        const existing = open.find((f) => f.loop_id === e.loop.id && f.kind === j.kind);
        const change = await applyJudgement(tx, { organisationId, machineId, loopId: e.loop.id, judgement: j, existing, autoResolveAfterS: e.settings.autoResolveAfterS, now });
        if (change === "opened") result.opened += 1;
        if (change === "escalated") result.escalated += 1;
        if (change === "resolved") result.resolved += 1;
      }
    }
    await tx.execute(sql`
      insert into loop_health (organisation_id, loop_id, figures, evaluated_at)
      values ${sql.join(evaluations.map((e) => sql`(${organisationId}, ${e.loop.id}::uuid, ${JSON.stringify(e.figures)}::jsonb, ${now.toISOString()}::timestamptz)`), sql`, `)}
      on conflict (organisation_id, loop_id) do update set figures = excluded.figures, evaluated_at = excluded.evaluated_at`);
    await writeDailySnapshots(tx, organisationId, evaluations.map((e) => ({ loopId: e.loop.id, thresholds: e.loop.thresholds, rows: e.rows })), now);
  });
  result.alertsPending = result.opened + result.escalated > 0;
  return result;
}

type Change = "opened" | "escalated" | "updated" | "cleared" | "resolved" | "none";

async function applyJudgement(
  tx: Db,
  input: { organisationId: string; machineId: string; loopId: string; judgement: FindingJudgement; existing: OpenFinding | undefined; autoResolveAfterS: number; now: Date },
): Promise<Change> {
  const { organisationId, machineId, loopId, judgement: j, existing, now } = input;
  const at = now.toISOString();
  if (j.status === "unknown") return "none";
  if (j.status === "clear") {
    if (!existing) return "none";
    // Silence ends beyond doubt when a digest arrives: that finding resolves at once. The others
    // wait until their figures have stayed clear for the template's auto-resolve time.
    const waitS = existing.kind === "silent" ? 0 : input.autoResolveAfterS;
    const clearSince = existing.clear_since ? asDate(existing.clear_since) : waitS === 0 ? now : null;
    if (!clearSince) {
      await tx.execute(sql`update finding set clear_since = ${at}::timestamptz where organisation_id = ${organisationId} and id = ${existing.id}::uuid`);
      return "cleared";
    }
    if (now.getTime() - clearSince.getTime() < waitS * 1000) return "none";
    await tx.execute(sql`update finding set state = 'resolved', resolved_at = ${at}::timestamptz, updated_at = ${at}::timestamptz, alert_pending = 0
      where organisation_id = ${organisationId} and id = ${existing.id}::uuid`);
    await tx.execute(sql`insert into finding_event (organisation_id, finding_id, at, state, severity, actor_id, comment)
      values (${organisationId}, ${existing.id}::uuid, ${at}::timestamptz, 'resolved', ${existing.severity}, null,
              ${waitS === 0 ? "Digests arrived again: resolved automatically." : `Clear since ${clearSince.toISOString()}: resolved automatically after ${Math.round(waitS / 3600)} h.`})`);
    return "resolved";
  }
  if (!existing) {
    const inserted = await tx.execute<{ id: string }>(sql`
      insert into finding (organisation_id, machine_id, loop_id, kind, severity, state, summary, evidence, opened_at, updated_at, alert_pending)
      values (${organisationId}, ${machineId}::uuid, ${loopId}::uuid, ${j.kind}, ${j.severity}, 'open', ${j.summary}, ${JSON.stringify(j.evidence)}::jsonb, ${at}::timestamptz, ${at}::timestamptz, 1)
      on conflict (organisation_id, loop_id, kind) where state in ('open', 'acknowledged') do nothing
      returning id`);
    const id = inserted.rows[0]?.id;
    if (!id) return "none";
    await tx.execute(sql`insert into finding_event (organisation_id, finding_id, at, state, severity, actor_id, comment)
      values (${organisationId}, ${id}::uuid, ${at}::timestamptz, 'open', ${j.severity}, null, ${j.summary})`);
    return "opened";
  }
  const raised = SEVERITY_RANK[j.severity] > SEVERITY_RANK[existing.severity];
  const changed = j.severity !== existing.severity;
  await tx.execute(sql`update finding set severity = ${j.severity}, summary = ${j.summary}, evidence = ${JSON.stringify(j.evidence)}::jsonb, clear_since = null
      ${changed ? sql`, updated_at = ${at}::timestamptz` : sql``} ${raised ? sql`, alert_pending = 1` : sql``}
    where organisation_id = ${organisationId} and id = ${existing.id}::uuid`);
  if (changed) {
    await tx.execute(sql`insert into finding_event (organisation_id, finding_id, at, state, severity, actor_id, comment)
      values (${organisationId}, ${existing.id}::uuid, ${at}::timestamptz, ${existing.state}, ${j.severity}, null, ${`Severity ${raised ? "raised" : "lowered"} to ${j.severity}: ${j.summary}`})`);
  }
  return raised ? "escalated" : "updated";
}

/** UTC day of a time, as YYYY-MM-DD. */
const dayOf = (ms: number) => new Date(ms).toISOString().slice(0, 10);

/**
 * Each loop's band and score per UTC day over the last TREND_DAYS days, from its hourly rollups
 * by the score table (assess.ts): the day's saturation and held shares, detections per hour
 * (over at least the supervision time) and error RMS. A day without digests after the loop's
 * first one is silent.
 */
async function writeDailySnapshots(tx: Db, organisationId: string, loops: { loopId: string; thresholds: HealthThresholds; rows: HourRow[] }[], now: Date) {
  const firstDay = Date.parse(dayOf(now.getTime() - (TREND_DAYS - 1) * DAY_MS));
  // Only days whose band or score changed are written (usually today's alone).
  const stored = new Map<string, string>();
  if (loops.length > 0) {
    const rows = await tx.execute<{ loop_id: string; day: string; band: string; score: number | null }>(sql`
      select loop_id, to_char(day, 'YYYY-MM-DD') as day, band, score from loop_health_day
      where organisation_id = ${organisationId} and loop_id = any(array[${sql.join(loops.map((l) => sql`${l.loopId}::uuid`), sql`, `)}]) and day >= ${dayOf(firstDay)}::date`);
    for (const r of rows.rows) stored.set(`${r.loop_id} ${r.day}`, `${r.band} ${r.score ?? ""}`);
  }
  const values: ReturnType<typeof sql>[] = [];
  for (const l of loops) {
    const days = new Map<string, { samples: number; seconds: number; sat: number; clamp: number; err2: number; osc: number }>();
    for (const r of l.rows) {
      const t = asDate(r.hour).getTime();
      if (t < firstDay) continue;
      const key = dayOf(t);
      const d = days.get(key) ?? { samples: 0, seconds: 0, sat: 0, clamp: 0, err2: 0, osc: 0 };
      d.samples += Number(r.samples);
      d.seconds += Number(r.seconds);
      d.sat += Number(r.sat);
      d.clamp += Number(r.clamp);
      d.err2 += Number(r.err2);
      d.osc += Number(r.osc);
      days.set(key, d);
    }
    if (days.size === 0) continue;
    const start = Date.parse([...days.keys()].sort()[0]);
    for (let t = start; t <= now.getTime(); t += DAY_MS) {
      const key = dayOf(t);
      const d = days.get(key);
      let band: HealthBand = "silent";
      let score: number | null = null;
      if (d && d.samples > 0) {
        const signals = {
          saturationShare: d.sat / d.samples,
          clampShare: d.clamp / d.samples,
          oscillationPerHour: (d.osc * 3600) / Math.max(d.seconds, supervisionSeconds(l.thresholds.oscillationPerHour)),
          errorRmsRatio: Math.sqrt(d.err2 / d.samples) / l.thresholds.acceptableAmplitude,
        };
        score = scoreHealthSignals(signals, l.thresholds).score;
        band = bandForScore(score);
      }
      if (stored.get(`${l.loopId} ${key}`) === `${band} ${score ?? ""}`) continue;
      values.push(sql`(${organisationId}, ${l.loopId}::uuid, ${key}::date, ${band}, ${score}::int)`);
    }
  }
  if (values.length === 0) return;
  await tx.execute(sql`
    insert into loop_health_day (organisation_id, loop_id, day, band, score) values ${sql.join(values, sql`, `)}
    on conflict (organisation_id, loop_id, day) do update set band = excluded.band, score = excluded.score`);
}

/**
 * Open (or refresh) a `config_rejected` finding: a device refused a configuration. Called by the
 * release path; critical, since the machine keeps running its previous gains. Idempotent per
 * open finding (one per loop and kind); the evaluation job never resolves it: a person does.
 * Its alert goes out with the next `health.sweep` (each minute), which queues the alert job for
 * every organisation with findings waiting.
 */
export async function openConfigRejectedFinding(db: Db, { organisationId, loopId, reason, version, now = new Date() }: { organisationId: string; loopId: string; reason: string; version: number; now?: Date }): Promise<{ id: string; opened: boolean }> {
  const [target] = (await db.execute<{ machine_id: string }>(sql`select machine_id from loop where organisation_id = ${organisationId} and id = ${loopId}::uuid`)).rows;
  if (!target) throw new Error(`No loop ${loopId} in organisation ${organisationId}.`);
  const summary = `The device refused configuration version ${version}: ${reason}`;
  const evidence: FindingEvidence = { metric: "config.version", value: version, threshold: null, unit: "version", windowStart: null, windowEnd: now.toISOString(), figures: { version, reason } };
  return db.transaction(async (tx) => {
    const at = now.toISOString();
    const inserted = await tx.execute<{ id: string }>(sql`
      insert into finding (organisation_id, machine_id, loop_id, kind, severity, state, summary, evidence, opened_at, updated_at, alert_pending)
      values (${organisationId}, ${target.machine_id}::uuid, ${loopId}::uuid, 'config_rejected', 'critical', 'open', ${summary}, ${JSON.stringify(evidence)}::jsonb, ${at}::timestamptz, ${at}::timestamptz, 1)
      on conflict (organisation_id, loop_id, kind) where state in ('open', 'acknowledged') do update set summary = excluded.summary, evidence = excluded.evidence, updated_at = excluded.updated_at
      returning id, (xmax = 0) as opened`);
    const row = inserted.rows[0] as { id: string; opened: boolean };
    await tx.execute(sql`insert into finding_event (organisation_id, finding_id, at, state, severity, actor_id, comment)
      values (${organisationId}, ${row.id}::uuid, ${at}::timestamptz, 'open', 'critical', null, ${summary})`);
    return { id: row.id, opened: Boolean(row.opened) };
  });
}

/** Of the given loops, those with an open or acknowledged critical finding updated since `since` (the release guard). */
export async function openCriticalFindingLoopIds(db: Db, { organisationId, loopIds, since }: { organisationId: string; loopIds: string[]; since?: Date }): Promise<string[]> {
  if (loopIds.length === 0) return [];
  const rows = await db.execute<{ loop_id: string }>(sql`
    select distinct loop_id from finding
    where organisation_id = ${organisationId} and loop_id = any(array[${sql.join(loopIds.map((id) => sql`${id}::uuid`), sql`, `)}])
      and state in ('open', 'acknowledged') and severity = 'critical'
      ${since ? sql`and updated_at >= ${since.toISOString()}::timestamptz` : sql``}`);
  return rows.rows.map((r) => r.loop_id);
}
