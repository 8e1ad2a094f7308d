// Retune requests: a site manager asks the OEM's engineers to look at a machine (and loop); the
// engineers move it open → in_progress → done | declined (or straight from open to done or
// declined), each step with a comment the site manager sees. Creating one e-mails the
// organisation's engineers (role engineer, admin, owner).
import { sql } from "drizzle-orm";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { sendEmail } from "~/.server/email/send-email";
import { env } from "~/.server/env";
import type { SiteScope } from "~/.server/fleet/scope";
import type { RetuneRequest, RetuneState } from "~/lib/health/api-types";
import { DomainError } from "~/lib/errors";
import { machineScopeSql, notFound, requireUuid } from "./findings";

/** Allowed moves; a finished request (done, declined) stays finished. */
export const RETUNE_TRANSITIONS: Record<RetuneState, RetuneState[]> = {
  open: ["in_progress", "done", "declined"],
  in_progress: ["done", "declined"],
  done: [],
  declined: [],
};

type RequestRow = {
  id: string;
  state: RetuneState;
  machine_id: string;
  machine_serial: string;
  loop_id: string | null;
  loop_key: string | null;
  observation: string;
  requested_by: string | null;
  created_at: Date | string;
  updated_at: Date | string;
  total?: number;
};

const iso = (v: Date | string) => (v instanceof Date ? v : new Date(v)).toISOString();

const SELECT = sql`
  select r.id, r.state, r.machine_id, m.serial as machine_serial, r.loop_id, l.key as loop_key, r.observation,
         u.name as requested_by, r.created_at, r.updated_at
  from retune_request r
  join machine m on m.organisation_id = r.organisation_id and m.id = r.machine_id
  left join loop l on l.organisation_id = r.organisation_id and l.id = r.loop_id
  left join "user" u on u.id = r.requested_by`;

async function historyOf(db: Db, organisationId: string, ids: string[]) {
  if (ids.length === 0) return new Map<string, RetuneRequest["history"]>();
  const rows = await db.execute<{ request_id: string; at: Date | string; state: RetuneState; actor_name: string | null; comment: string | null }>(sql`
    select e.request_id, e.at, e.state, case when e.actor_id like 'token:%' then 'API token' else u.name end as actor_name, e.comment
    from retune_event e left join "user" u on u.id = e.actor_id
    where e.organisation_id = ${organisationId} and e.request_id in (${sql.join(ids.map((id) => sql`${id}::uuid`), sql`, `)})
    order by e.at, e.id`);
  const out = new Map<string, RetuneRequest["history"]>();
  for (const r of rows.rows) {
    const list = out.get(r.request_id) ?? [];
    list.push({ at: iso(r.at), state: r.state, actorName: r.actor_name, comment: r.comment });
    out.set(r.request_id, list);
  }
  return out;
}

function toRequest(r: RequestRow, history: RetuneRequest["history"]): RetuneRequest {
  return {
    id: r.id,
    state: r.state,
    machineId: r.machine_id,
    machineSerial: r.machine_serial,
    loopId: r.loop_id,
    loopKey: r.loop_key,
    observation: r.observation,
    requestedBy: r.requested_by,
    createdAt: iso(r.created_at),
    updatedAt: iso(r.updated_at),
    history,
  };
}

export async function getRetuneRequest(db: Db, scope: SiteScope, id: string): Promise<RetuneRequest> {
  const requestId = requireUuid(id, "retune request");
  const [row] = (await db.execute<RequestRow>(sql`${SELECT} where r.organisation_id = ${scope.organisationId} and r.id = ${requestId}::uuid and ${machineScopeSql(scope)}`)).rows;
  if (!row) throw notFound("retune request");
  return toRequest(row, (await historyOf(db, scope.organisationId, [row.id])).get(row.id) ?? []);
}

export type RetuneListQuery = { state?: RetuneState; machineId?: string; page: number; pageSize: number };

/** Site managers: their sites' requests; everyone else: all. Open ones first, newest first. */
export async function listRetuneRequests(db: Db, scope: SiteScope, query: RetuneListQuery = { page: 1, pageSize: 50 }) {
  const where = [sql`r.organisation_id = ${scope.organisationId}`, machineScopeSql(scope)];
  if (query.state) where.push(sql`r.state = ${query.state}`);
  if (query.machineId) where.push(sql`r.machine_id = ${query.machineId}::uuid`);
  const rows = (
    await db.execute<RequestRow>(sql`
      select x.*, count(*) over ()::int as total from (${SELECT} where ${sql.join(where, sql` and `)}) x
      order by case x.state when 'open' then 0 when 'in_progress' then 1 else 2 end, x.updated_at desc, x.id
      limit ${query.pageSize} offset ${(query.page - 1) * query.pageSize}`)
  ).rows;
  const history = await historyOf(db, scope.organisationId, rows.map((r) => r.id));
  return { items: rows.map((r) => toRequest(r, history.get(r.id) ?? [])), total: Number(rows[0]?.total ?? 0), page: query.page, pageSize: query.pageSize };
}

/**
 * A site manager's request for a machine in their sites (another's machine or a loop of
 * another machine: 404). Engineers are e-mailed after it is stored; a failed e-mail does not undo
 * the request (the queue shows it) and is reported as `notified: false`.
 */
export async function createRetuneRequest(
  db: Db,
  scope: SiteScope,
  actor: string,
  input: { machineId: string; loopId?: string; observation: string },
): Promise<{ id: string; state: "open"; notified: boolean }> {
  const machineId = requireUuid(input.machineId, "machine");
  const [target] = (
    await db.execute<{ serial: string; site_name: string }>(sql`
      select m.serial, s.name as site_name from machine m join site s on s.organisation_id = m.organisation_id and s.id = m.site_id
      where m.organisation_id = ${scope.organisationId} and m.id = ${machineId}::uuid and ${machineScopeSql(scope)}`)
  ).rows;
  if (!target) throw notFound("machine");
  let loopKey: string | null = null;
  if (input.loopId) {
    const loopId = requireUuid(input.loopId, "loop");
    const [l] = (await db.execute<{ key: string }>(sql`select key from loop where organisation_id = ${scope.organisationId} and id = ${loopId}::uuid and machine_id = ${machineId}::uuid`)).rows;
    if (!l) throw notFound("loop");
    loopKey = l.key;
  }
  const observation = input.observation.trim();
  const id = await db.transaction(async (tx) => {
    const [row] = (
      await tx.execute<{ id: string }>(sql`
        insert into retune_request (organisation_id, machine_id, loop_id, observation, state, requested_by)
        values (${scope.organisationId}, ${machineId}::uuid, ${input.loopId ?? null}::uuid, ${observation}, 'open', ${actor.startsWith("token:") ? null : actor})
        returning id`)
    ).rows;
    await tx.execute(sql`insert into retune_event (organisation_id, request_id, state, actor_id, comment) values (${scope.organisationId}, ${row.id}::uuid, 'open', ${actor}, ${observation})`);
    await recordAudit(tx, { organisationId: scope.organisationId, actor, action: "retune.request", targetType: "retune_request", targetId: row.id, detail: { machineSerial: target.serial, loopKey } });
    return row.id;
  });
  let notified = true;
  try {
    await emailEngineers(db, scope.organisationId, { id, serial: target.serial, siteName: target.site_name, loopKey, observation });
  } catch (error) {
    console.error("retune request e-mail not sent", error);
    notified = false;
  }
  return { id, state: "open", notified };
}

async function emailEngineers(db: Db, organisationId: string, r: { id: string; serial: string; siteName: string; loopKey: string | null; observation: string }) {
  const [org] = (await db.execute<{ slug: string; name: string }>(sql`select slug, name from organisation where id = ${organisationId}`)).rows;
  const engineers = (
    await db.execute<{ email: string }>(sql`select u.email from member m join "user" u on u.id = m.user_id where m.organisation_id = ${organisationId} and m.role in ('engineer', 'admin', 'owner') order by u.email`)
  ).rows;
  const link = `${env().BETTER_AUTH_URL.replace(/\/$/, "")}/o/${org.slug}/retune-requests`;
  const what = `${r.serial}${r.loopKey ? ` ${r.loopKey}` : ""} (${r.siteName})`;
  for (const e of engineers) {
    await sendEmail(
      {
        to: e.email,
        subject: `Retune requested: ${what}`,
        text: `A site manager asks for a retune of ${what}:\n\n${r.observation}\n\nThe queue: ${link}\n`,
        html: `<p>A site manager asks for a retune of ${escape(what)}:</p><blockquote>${escape(r.observation)}</blockquote><p><a href="${escape(link)}">Open the queue</a></p>`,
      },
      { idempotencyKey: `flyball-retune/${organisationId}/${r.id}/${e.email}` },
    );
  }
}

const escape = (text: string) => text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);

export async function setRetuneRequestState(db: Db, scope: SiteScope, actor: string, id: string, input: { state: RetuneState; comment: string }): Promise<RetuneRequest> {
  const requestId = requireUuid(id, "retune request");
  await db.transaction(async (tx) => {
    const [row] = (
      await tx.execute<{ state: RetuneState }>(sql`
        select r.state from retune_request r join machine m on m.organisation_id = r.organisation_id and m.id = r.machine_id
        where r.organisation_id = ${scope.organisationId} and r.id = ${requestId}::uuid and ${machineScopeSql(scope)} for update of r`)
    ).rows;
    if (!row) throw notFound("retune request");
    if (!RETUNE_TRANSITIONS[row.state].includes(input.state)) {
      throw new DomainError("invalid_transition", `A request that is ${row.state.replace("_", " ")} cannot move to ${input.state.replace("_", " ")}.`, { status: 409, field: "state" });
    }
    await tx.execute(sql`update retune_request set state = ${input.state}, updated_at = now() where organisation_id = ${scope.organisationId} and id = ${requestId}::uuid`);
    await tx.execute(sql`insert into retune_event (organisation_id, request_id, state, actor_id, comment) values (${scope.organisationId}, ${requestId}::uuid, ${input.state}, ${actor}, ${input.comment.trim()})`);
    await recordAudit(tx, { organisationId: scope.organisationId, actor, action: "retune.state", targetType: "retune_request", targetId: requestId, detail: { from: row.state, to: input.state } });
  });
  return getRetuneRequest(db, scope, requestId);
}
