// A loop's or a site's health report, for the CSV export and the printable page: each loop's
// health (getLoopHealth), its open findings and its 30-day daily bands. Site scope applies
// (another site's loop or site: 404). healthReportCsv writes it through toCsv (formula cells
// neutralised).
import { sql } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import type { SiteScope } from "~/.server/fleet/scope";
import type { FindingItem, LoopHealth } from "~/lib/health/api-types";
import type { HealthBand } from "~/lib/health/assess";
import { toCsv } from "~/lib/csv";
import { DomainError } from "~/lib/errors";
import { TREND_DAYS } from "./evaluate";
import { listFindings, machineScopeSql, notFound, requireUuid } from "./findings";
import { getLoopHealth } from "./overview";

export type HealthReportLoop = {
  loopId: string;
  loopKey: string;
  loopName: string;
  machineId: string;
  machineSerial: string;
  health: LoopHealth;
  openFindings: FindingItem[];
  trend: { day: string; band: HealthBand; score: number | null }[];
};

export type HealthReport = {
  kind: "loop" | "site";
  title: string;
  siteName: string;
  customerName: string;
  generatedAt: string;
  loops: HealthReportLoop[];
};

export async function getHealthReport(db: Db, scope: SiteScope, target: { loopId?: string; siteId?: string }, now = new Date()): Promise<HealthReport> {
  if (!target.loopId === !target.siteId) throw new DomainError("invalid_request", "Ask for one loop (loopId) or one site (siteId).", { status: 400 });
  const where = target.loopId ? sql`l.id = ${requireUuid(target.loopId, "loop")}::uuid` : sql`m.site_id = ${requireUuid(target.siteId, "site")}::uuid and m.status = 'active'`;
  const rows = (
    await db.execute<{ loop_id: string; key: string; name: string; machine_id: string; serial: string; site_name: string; customer_name: string }>(sql`
      select l.id as loop_id, l.key, t.name, m.id as machine_id, m.serial, s.name as site_name, c.name as customer_name
      from loop l
      join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
      join machine m on m.organisation_id = l.organisation_id and m.id = l.machine_id
      join site s on s.organisation_id = m.organisation_id and s.id = m.site_id
      join customer c on c.organisation_id = s.organisation_id and c.id = s.customer_id
      where l.organisation_id = ${scope.organisationId} and ${where} and ${machineScopeSql(scope)}
      order by m.serial, t.position, l.key`)
  ).rows;
  if (rows.length === 0) {
    if (target.loopId) throw notFound("loop");
    // A site in scope with no active machine still has a (short) report.
    const [site] = (
      await db.execute<{ site_name: string; customer_name: string }>(sql`
        select s.name as site_name, c.name as customer_name from site s join customer c on c.organisation_id = s.organisation_id and c.id = s.customer_id
        where s.organisation_id = ${scope.organisationId} and s.id = ${target.siteId!}::uuid
          and ${scope.siteIds === null ? sql`true` : scope.siteIds.length ? sql`s.id in (${sql.join(scope.siteIds.map((id) => sql`${id}::uuid`), sql`, `)})` : sql`false`}`)
    ).rows;
    if (!site) throw notFound("site");
    return { kind: "site", title: `Loop health: ${site.site_name}`, siteName: site.site_name, customerName: site.customer_name, generatedAt: now.toISOString(), loops: [] };
  }
  const since = new Date(now.getTime() - (TREND_DAYS - 1) * 86_400_000).toISOString().slice(0, 10);
  const days = (
    await db.execute<{ loop_id: string; day: string; band: HealthBand; score: number | null }>(sql`
      select loop_id, to_char(day, 'YYYY-MM-DD') as day, band, score from loop_health_day
      where organisation_id = ${scope.organisationId} and loop_id in (${sql.join(rows.map((r) => sql`${r.loop_id}::uuid`), sql`, `)}) and day >= ${since}::date
      order by loop_id, day`)
  ).rows;
  const loops: HealthReportLoop[] = [];
  for (const r of rows) {
    const findings = await listFindings(db, scope, { loopId: r.loop_id, sort: "severity", dir: "desc", page: 1, pageSize: 200 });
    loops.push({
      loopId: r.loop_id,
      loopKey: r.key,
      loopName: r.name,
      machineId: r.machine_id,
      machineSerial: r.serial,
      health: await getLoopHealth(db, scope, r.loop_id),
      openFindings: findings.items.filter((f) => f.state !== "resolved"),
      trend: days.filter((d) => d.loop_id === r.loop_id).map((d) => ({ day: d.day, band: d.band, score: d.score === null ? null : Number(d.score) })),
    });
  }
  const first = rows[0];
  return {
    kind: target.loopId ? "loop" : "site",
    title: target.loopId ? `Loop health: ${first.serial} ${first.key}` : `Loop health: ${first.site_name}`,
    siteName: first.site_name,
    customerName: first.customer_name,
    generatedAt: now.toISOString(),
    loops,
  };
}

const share = (v: number | null) => (v === null ? "" : v.toFixed(4));
const num = (v: number | null, digits = 3) => (v === null ? "" : Number(v.toPrecision(digits)).toString());

/** One row per loop: its health figures and its open findings (kind:severity, joined with "; "). */
export function healthReportCsv(report: HealthReport): string {
  const header = [
    "machine", "loop", "band", "score", "reasons", "last digest",
    "saturation 24h", "saturation 7d", "saturation slope per day", "saturation act limit reached",
    "integrator held 24h", "pinned 24h", "load detections per hour", "detection limit per hour",
    "drift state", "drift cusum high", "drift cusum low", "drift limit", "open findings",
  ];
  const rows = report.loops.map((l) => {
    const h = l.health;
    return [
      l.machineSerial, l.loopKey, h.band, String(h.score), h.reasons.join(" "), h.lastDigestAt ?? "",
      share(h.saturation.share24h), share(h.saturation.share7d), num(h.saturation.slopePerDay), h.saturation.projectedActAt ?? "",
      share(h.windup.share24h), share(h.windup.pinnedShare24h), num(h.oscillation.detectionsPerHour), num(h.oscillation.limitPerHour),
      h.drift.state, num(h.drift.cusumHigh), num(h.drift.cusumLow), String(h.drift.limit),
      l.openFindings.map((f) => `${f.kind}:${f.severity}: ${f.summary}`).join("; "),
    ];
  });
  return toCsv(header, rows);
}
