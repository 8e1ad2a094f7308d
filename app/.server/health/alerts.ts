// Alert e-mails for findings (DEVELOPERS.md, "Loop health"): each member's subscription (kinds,
// minimum severity, sites; role defaults), delivery by the `health.deliver-alerts` job, a summary
// instead of a storm, one e-mail per (finding, severity, recipient) whatever the retries, and an
// unsubscribe link that works without signing in (a signed, expiring token).
import { createHmac } from "node:crypto";
import { sql } from "drizzle-orm";
import { jwtVerify, SignJWT } from "jose";
import type { Db } from "~/.server/db/client";
import { sendEmail } from "~/.server/email/send-email";
import { env } from "~/.server/env";
import type { SiteScope } from "~/.server/fleet/scope";
import { FINDING_KINDS, type AlertSubscription, type FindingKind, type FindingSeverity } from "~/lib/health/api-types";
import { SEVERITY_RANK } from "~/lib/health/finding-rules";
import { isSiteScoped, type Role } from "~/lib/access/capabilities";
import { DomainError } from "~/lib/errors";

/** At least this many matching findings opened within `summaryAfter` minutes go out as one summary. */
export const SUMMARY_MIN_FINDINGS = 3;
export const DEFAULT_SUMMARY_AFTER_MIN = 10;
/** How long an unsubscribe link works. */
export const UNSUBSCRIBE_TOKEN_DAYS = 60;

/** A role's subscription before the member saves one: every kind, warning and up; viewers none. Empty siteIds: every site the member can see. */
export function defaultSubscription(role: Role): AlertSubscription {
  return { kinds: role === "viewer" ? [] : [...FINDING_KINDS], minSeverity: "warning", siteIds: [], summaryAfter: DEFAULT_SUMMARY_AFTER_MIN };
}

export type AlertMember = { memberId: string; role: Role };

type SubscriptionRow = { kinds: string[]; min_severity: string; site_ids: string[]; summary_after: number };

export async function getAlertSubscription(db: Db, scope: SiteScope, member: AlertMember): Promise<AlertSubscription> {
  const [row] = (
    await db.execute<SubscriptionRow>(sql`select kinds, min_severity, site_ids, summary_after from alert_subscription where organisation_id = ${scope.organisationId} and member_id = ${member.memberId}`)
  ).rows;
  if (!row) return defaultSubscription(member.role);
  return {
    kinds: row.kinds.filter((k): k is FindingKind => (FINDING_KINDS as readonly string[]).includes(k)),
    minSeverity: row.min_severity as FindingSeverity,
    // A site manager's stored sites are clamped to today's assignment.
    siteIds: scope.siteIds === null ? row.site_ids : row.site_ids.filter((id) => scope.siteIds!.includes(id)),
    summaryAfter: Number(row.summary_after),
  };
}

/**
 * Save the caller's own subscription. A site manager's sites are clamped to their own (others
 * are dropped: they can never widen past them); anyone else's must be sites of the organisation.
 */
export async function saveAlertSubscription(db: Db, scope: SiteScope, member: AlertMember, input: AlertSubscription): Promise<AlertSubscription> {
  let siteIds = [...new Set(input.siteIds.map((id) => id.toLowerCase()))];
  if (scope.siteIds !== null) siteIds = siteIds.filter((id) => scope.siteIds!.includes(id));
  else if (siteIds.length > 0) {
    const known = (await db.execute<{ id: string }>(sql`select id from site where organisation_id = ${scope.organisationId} and id in (${sql.join(siteIds.map((id) => sql`${id}::uuid`), sql`, `)})`)).rows.map((r) => r.id);
    const unknown = siteIds.filter((id) => !known.includes(id));
    if (unknown.length) throw new DomainError("invalid_site", `No such site: ${unknown.join(", ")}.`, { status: 400, field: "siteIds" });
  }
  const kinds = [...new Set(input.kinds)];
  await db.execute(sql`
    insert into alert_subscription (organisation_id, member_id, kinds, min_severity, site_ids, summary_after, updated_at)
    values (${scope.organisationId}, ${member.memberId}, ${toTextArray(kinds)}, ${input.minSeverity}, ${toUuidArray(siteIds)}, ${input.summaryAfter}, now())
    on conflict (organisation_id, member_id) do update set kinds = excluded.kinds, min_severity = excluded.min_severity, site_ids = excluded.site_ids,
      summary_after = excluded.summary_after, updated_at = excluded.updated_at`);
  return getAlertSubscription(db, scope, member);
}

const toTextArray = (values: string[]) => (values.length ? sql`array[${sql.join(values.map((v) => sql`${v}`), sql`, `)}]::text[]` : sql`'{}'::text[]`);
const toUuidArray = (values: string[]) => (values.length ? sql`array[${sql.join(values.map((v) => sql`${v}::uuid`), sql`, `)}]::uuid[]` : sql`'{}'::uuid[]`);

// ---- unsubscribe tokens ----

function unsubscribeKey(): Uint8Array {
  const secret = env().BETTER_AUTH_SECRET;
  if (!secret) throw new Error("BETTER_AUTH_SECRET is not set: unsubscribe links cannot be signed.");
  // A key of its own, derived from the auth secret, so a session token can never pass for one.
  return new Uint8Array(createHmac("sha256", secret).update("flyball unsubscribe links v1").digest());
}

const UNSUBSCRIBE_AUDIENCE = "flyball-unsubscribe";

export async function createUnsubscribeToken({ organisationId, memberId }: { organisationId: string; memberId: string }, now = new Date()): Promise<string> {
  const iat = Math.floor(now.getTime() / 1000);
  return new SignJWT({ org: organisationId })
    .setProtectedHeader({ alg: "HS256" })
    .setSubject(memberId)
    .setAudience(UNSUBSCRIBE_AUDIENCE)
    .setIssuedAt(iat)
    .setExpirationTime(iat + UNSUBSCRIBE_TOKEN_DAYS * 86_400)
    .sign(unsubscribeKey());
}

/** Read a token without acting on it (the page shows whose alerts it stops); null when invalid or expired. */
export async function readUnsubscribeToken(token: string): Promise<{ organisationId: string; memberId: string } | null> {
  try {
    const { payload } = await jwtVerify(token, unsubscribeKey(), { algorithms: ["HS256"], audience: UNSUBSCRIBE_AUDIENCE });
    if (typeof payload.sub !== "string" || typeof payload.org !== "string") return null;
    return { organisationId: payload.org, memberId: payload.sub };
  } catch {
    return null;
  }
}

/**
 * Stop every alert e-mail for the token's member (kinds emptied, the rest kept). Throws a 400
 * DomainError for a bad or expired token, 404 when the membership is gone.
 */
export async function unsubscribeWithToken(db: Db, token: string): Promise<{ organisationName: string; email: string }> {
  const claims = await readUnsubscribeToken(token);
  if (!claims) throw new DomainError("invalid_token", "This unsubscribe link is not valid or has expired. Sign in to change your alerts.", { status: 400 });
  const [member] = (
    await db.execute<{ role: Role; email: string; organisation_name: string }>(sql`
      select m.role, u.email, o.name as organisation_name from member m join "user" u on u.id = m.user_id join organisation o on o.id = m.organisation_id
      where m.organisation_id = ${claims.organisationId} and m.id = ${claims.memberId}`)
  ).rows;
  if (!member) throw new DomainError("not_found", "This membership no longer exists.", { status: 404 });
  const current = defaultSubscription(member.role);
  await db.execute(sql`
    insert into alert_subscription (organisation_id, member_id, kinds, min_severity, site_ids, summary_after, updated_at)
    values (${claims.organisationId}, ${claims.memberId}, '{}'::text[], ${current.minSeverity}, '{}'::uuid[], ${current.summaryAfter}, now())
    on conflict (organisation_id, member_id) do update set kinds = '{}'::text[], updated_at = now()`);
  return { organisationName: member.organisation_name, email: member.email };
}

// ---- delivery ----

type PendingFinding = { id: string; kind: FindingKind; severity: FindingSeverity; summary: string; opened_at: Date | string; site_id: string; serial: string; loop_key: string; site_name: string };
type Recipient = { member_id: string; role: Role; email: string; name: string; kinds: string[] | null; min_severity: string | null; site_ids: string[] | null; summary_after: number | null; assigned: string[] | null };

const time = (v: Date | string) => (v instanceof Date ? v : new Date(v)).getTime();

function subscriptionOf(r: Recipient): AlertSubscription {
  if (r.kinds === null) return defaultSubscription(r.role);
  return { kinds: r.kinds as FindingKind[], minSeverity: (r.min_severity ?? "warning") as FindingSeverity, siteIds: r.site_ids ?? [], summaryAfter: r.summary_after ?? DEFAULT_SUMMARY_AFTER_MIN };
}

/** The findings a recipient's subscription lets through: kind, severity, and sites (a site manager never past their own). */
export function matchingFindings<F extends Pick<PendingFinding, "kind" | "severity" | "site_id">>(findings: F[], sub: AlertSubscription, role: Role, assigned: string[]): F[] {
  const own = isSiteScoped(role) ? assigned : null;
  const chosen = sub.siteIds.length ? sub.siteIds : null;
  return findings.filter(
    (f) =>
      sub.kinds.includes(f.kind) &&
      SEVERITY_RANK[f.severity] >= SEVERITY_RANK[sub.minSeverity] &&
      (own === null || own.includes(f.site_id)) &&
      (chosen === null || chosen.includes(f.site_id)),
  );
}

/**
 * The alert job: every open finding waiting for its alert goes to each member whose subscription
 * matches. Each (finding, severity, member) is claimed once in alert_delivery before its e-mail
 * is sent and marked sent after, so a retried job sends only what was not sent yet (and the
 * claim's key goes to Resend as its idempotency key, for a crash between send and mark).
 */
export async function deliverAlerts(db: Db, { organisationId, now = new Date() }: { organisationId: string; now?: Date }): Promise<{ emails: number; findings: number }> {
  const [org] = (await db.execute<{ slug: string; name: string }>(sql`select slug, name from organisation where id = ${organisationId}`)).rows;
  if (!org) return { emails: 0, findings: 0 };
  const pending = (
    await db.execute<PendingFinding>(sql`
      select f.id, f.kind, f.severity, f.summary, f.opened_at, m.site_id, m.serial, l.key as loop_key, s.name as site_name
      from finding f
      join machine m on m.organisation_id = f.organisation_id and m.id = f.machine_id
      join site s on s.organisation_id = m.organisation_id and s.id = m.site_id
      join loop l on l.organisation_id = f.organisation_id and l.id = f.loop_id
      where f.organisation_id = ${organisationId} and f.alert_pending = 1 and f.state = 'open'
      order by f.opened_at, f.id`)
  ).rows;
  if (pending.length > 0) {
    const recipients = (
      await db.execute<Recipient>(sql`
        select m.id as member_id, m.role, u.email, u.name, a.kinds, a.min_severity, a.site_ids, a.summary_after,
               (select array_agg(sa.site_id) from site_assignment sa where sa.organisation_id = m.organisation_id and sa.member_id = m.id) as assigned
        from member m join "user" u on u.id = m.user_id
        left join alert_subscription a on a.organisation_id = m.organisation_id and a.member_id = m.id
        where m.organisation_id = ${organisationId}
        order by m.id`)
    ).rows;
    // Claim: one row per (finding, severity, member), naming the e-mail that carries it.
    for (const r of recipients) {
      const sub = subscriptionOf(r);
      const matching = matchingFindings(pending, sub, r.role, r.assigned ?? []);
      if (matching.length === 0) continue;
      const latest = Math.max(...matching.map((f) => time(f.opened_at)));
      const burst = sub.summaryAfter > 0 ? matching.filter((f) => time(f.opened_at) >= latest - sub.summaryAfter * 60_000) : [];
      const summarised = burst.length >= SUMMARY_MIN_FINDINGS ? new Set(burst.map((f) => f.id)) : new Set<string>();
      const summaryKey = summarised.size ? `summary:${r.member_id}:${[...summarised].sort()[0]}:${summarised.size}` : null;
      const rows = matching.map((f) => {
        const key = `${f.id}:${f.severity}:${r.member_id}`;
        return sql`(${organisationId}, ${key}, ${f.id}::uuid, ${r.member_id}, ${summarised.has(f.id) ? summaryKey! : `finding:${key}`})`;
      });
      await db.execute(sql`insert into alert_delivery (organisation_id, key, finding_id, member_id, email_key) values ${sql.join(rows, sql`, `)} on conflict do nothing`);
    }
  }
  // Send every claimed e-mail not yet sent (this run's and any a failed run left behind).
  const unsent = (
    await db.execute<{ email_key: string; member_id: string; finding_id: string }>(sql`
      select email_key, member_id, finding_id from alert_delivery where organisation_id = ${organisationId} and status = 'pending' order by email_key, finding_id`)
  ).rows;
  const emails = new Map<string, { memberId: string; findingIds: string[] }>();
  for (const u of unsent) {
    const e = emails.get(u.email_key) ?? { memberId: u.member_id, findingIds: [] };
    e.findingIds.push(u.finding_id);
    emails.set(u.email_key, e);
  }
  let sent = 0;
  for (const [emailKey, e] of emails) {
    const message = await composeAlert(db, { organisationId, org, memberId: e.memberId, findingIds: e.findingIds, now });
    if (message) {
      const result = await sendEmail(message, { idempotencyKey: `flyball-alert/${organisationId}/${emailKey}` });
      await db.execute(sql`update alert_delivery set status = 'sent', email_id = ${result.id}, sent_at = now() where organisation_id = ${organisationId} and email_key = ${emailKey} and status = 'pending'`);
      sent += 1;
    } else {
      await db.execute(sql`update alert_delivery set status = 'skipped' where organisation_id = ${organisationId} and email_key = ${emailKey} and status = 'pending'`);
    }
  }
  if (pending.length > 0) {
    await db.execute(sql`update finding set alert_pending = 0 where organisation_id = ${organisationId} and id in (${sql.join(pending.map((f) => sql`${f.id}::uuid`), sql`, `)})`);
  }
  return { emails: sent, findings: pending.length };
}

const SEVERITY_WORD: Record<FindingSeverity, string> = { info: "Note", warning: "Warning", critical: "Critical" };
const KIND_WORD: Record<FindingKind, string> = { drift: "drift", windup: "windup", saturation: "saturation", oscillation: "oscillation", silent: "silence", config_rejected: "configuration refused" };

function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
}

async function composeAlert(db: Db, { organisationId, org, memberId, findingIds, now }: { organisationId: string; org: { slug: string; name: string }; memberId: string; findingIds: string[]; now: Date }) {
  const [to] = (await db.execute<{ email: string }>(sql`select u.email from member m join "user" u on u.id = m.user_id where m.organisation_id = ${organisationId} and m.id = ${memberId}`)).rows;
  if (!to) return null;
  const findings = (
    await db.execute<PendingFinding>(sql`
      select f.id, f.kind, f.severity, f.summary, f.opened_at, m.site_id, m.serial, l.key as loop_key, s.name as site_name
      from finding f
      join machine m on m.organisation_id = f.organisation_id and m.id = f.machine_id
      join site s on s.organisation_id = m.organisation_id and s.id = m.site_id
      join loop l on l.organisation_id = f.organisation_id and l.id = f.loop_id
      where f.organisation_id = ${organisationId} and f.id in (${sql.join(findingIds.map((id) => sql`${id}::uuid`), sql`, `)})
      order by case f.severity when 'critical' then 0 when 'warning' then 1 else 2 end, m.serial, l.key`)
  ).rows;
  if (findings.length === 0) return null;
  const origin = env().BETTER_AUTH_URL.replace(/\/$/, "");
  const link = (f: PendingFinding) => `${origin}/o/${org.slug}/findings/${f.id}`;
  const unsubscribe = `${origin}/unsubscribe?token=${encodeURIComponent(await createUnsubscribeToken({ organisationId, memberId }, now))}`;
  const footer = `You receive this because of your alert settings in ${org.name}. Stop these e-mails: ${unsubscribe}`;
  const htmlFooter = `<p style="color:#57534e;font-size:12px">You receive this because of your alert settings in ${escapeHtml(org.name)}. <a href="${escapeHtml(unsubscribe)}">Stop these e-mails</a>.</p>`;
  const line = (f: PendingFinding) => `${SEVERITY_WORD[f.severity]} · ${f.serial} ${f.loop_key} (${f.site_name}) · ${KIND_WORD[f.kind]}: ${f.summary}`;
  if (findings.length === 1) {
    const f = findings[0];
    return {
      to: to.email,
      subject: `${SEVERITY_WORD[f.severity]}: ${KIND_WORD[f.kind]} on ${f.serial} ${f.loop_key}`,
      text: `${line(f)}\n\nOpen the finding: ${link(f)}\n\n${footer}\n`,
      html: `<p>${escapeHtml(line(f))}</p><p><a href="${escapeHtml(link(f))}">Open the finding</a></p>${htmlFooter}`,
    };
  }
  const critical = findings.filter((f) => f.severity === "critical").length;
  return {
    to: to.email,
    subject: `${findings.length} new findings in ${org.name}${critical ? ` (${critical} critical)` : ""}`,
    text: `${findings.length} findings opened in the last minutes:\n\n${findings.map((f) => `- ${line(f)}\n  ${link(f)}`).join("\n")}\n\nAll findings: ${origin}/o/${org.slug}/findings\n\n${footer}\n`,
    html: `<p>${findings.length} findings opened in the last minutes:</p><ul>${findings.map((f) => `<li><a href="${escapeHtml(link(f))}">${escapeHtml(line(f))}</a></li>`).join("")}</ul><p><a href="${escapeHtml(`${origin}/o/${org.slug}/findings`)}">All findings</a></p>${htmlFooter}`,
  };
}
