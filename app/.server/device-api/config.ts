// GET /api/v1/device/config and POST /api/v1/device/config/ack. The configuration is a JWT
// signed with the organisation's Ed25519 key: per-loop gains with a monotonic version, and an
// expiry, so the device can refuse forged, older or stale configurations. A loop is offered
// what its last release target set (loop.gain_set_id, a new version each time), or its
// template's defaults at the version it was registered with when nothing was released.
import { DomainError } from "~/lib/errors";
import { createHash } from "node:crypto";
import { SignJWT } from "jose";
import type { z } from "zod";
import { recordAudit } from "~/.server/audit/record-audit";
import { openConfigRejectedFinding } from "~/.server/health/evaluate";
import { getDb, getPool } from "~/.server/db/client";
import type { AckRequestSchema } from "./schemas";
import { loadSigningKey } from "~/.server/device-auth/signing-keys";
import type { AuthenticatedDevice, DeviceContext } from "~/.server/device-auth/tokens";

export const CONFIG_LIFETIME_S = 24 * 3600;

type LoopRow = {
  key: string;
  config_version: number;
  gain_set_id: string | null;
  gains: { kp: number; ki: number; kd: number };
  filter_n: number;
  setpoint_weight: number;
  anti_windup: "clamp" | "back_calculation";
  tracking_time_s: number | null;
  integrator_min: number | null;
  integrator_max: number | null;
  output_min: number;
  output_max: number;
  sample_period_s: number;
  slug: string;
};

// Without a gain set the controller's defaults apply: N = 10, b = 1, clamping, the template's range.
const LOOPS_SQL = `
select l.key, l.config_version, l.gain_set_id, l.gains,
  coalesce(gs.filter_n, 10) as filter_n, coalesce(gs.setpoint_weight, 1) as setpoint_weight,
  coalesce(gs.anti_windup, 'clamp') as anti_windup, gs.tracking_time_s, gs.integrator_min, gs.integrator_max,
  coalesce(gs.output_min, t.output_min) as output_min, coalesce(gs.output_max, t.output_max) as output_max,
  coalesce(gs.sample_period_s, t.sample_period_s) as sample_period_s, o.slug
from loop l
join loop_template t on t.organisation_id = l.organisation_id and t.id = l.template_id
join organisation o on o.id = l.organisation_id
left join gain_set gs on gs.organisation_id = l.organisation_id and gs.id = l.gain_set_id
where l.organisation_id = $1 and l.machine_id = $2
order by l.key`;

/** The ETag of a device's configuration: its signing key, the device, and the loops' state. */
function configEtag(kid: string, deviceId: string, configState: string | null): string {
  return `"${createHash("sha256").update(kid).update(deviceId).update(configState ?? "").digest("base64url").slice(0, 32)}"`;
}

function matches(ifNoneMatch: string | null, etag: string): boolean {
  return !!ifNoneMatch && ifNoneMatch.split(",").some((tag) => tag.trim().replace(/^W\//, "") === etag);
}

/**
 * The device's signed configuration, or notModified when `If-None-Match` names the current
 * one. `ctx.configState` comes with the device's authentication (tokens.ts), so an unchanged
 * configuration costs no query of its own.
 */
export async function getDeviceConfig(ctx: AuthenticatedDevice, ifNoneMatch: string | null, now = new Date()) {
  const key = await loadSigningKey(getDb(), ctx.organisationId, ctx.signingKid);
  const etag = configEtag(key.kid, ctx.deviceId, ctx.configState);
  if (matches(ifNoneMatch, etag)) return { notModified: true as const, etag };
  const rows = await getPool().query<LoopRow>({ name: "device_config_loops", text: LOOPS_SQL, values: [ctx.organisationId, ctx.machineId] });
  const loops = rows.rows.map((r) => ({
    key: r.key,
    version: r.config_version,
    gainSetId: r.gain_set_id,
    form: "parallel" as const,
    gains: { kp: r.gains.kp, ki: r.gains.ki, kd: r.gains.kd },
    filterN: r.filter_n,
    setpointWeight: r.setpoint_weight,
    antiWindup: r.anti_windup,
    trackingTime: r.tracking_time_s,
    integratorMin: r.integrator_min,
    integratorMax: r.integrator_max,
    outputMin: r.output_min,
    outputMax: r.output_max,
    samplePeriod: r.sample_period_s,
  }));
  const slug = rows.rows[0]?.slug ?? (await getPool().query<{ slug: string }>("select slug from organisation where id = $1", [ctx.organisationId])).rows[0].slug;
  const iat = Math.floor(now.getTime() / 1000);
  const exp = iat + CONFIG_LIFETIME_S;
  const jws = await new SignJWT({ loops })
    .setProtectedHeader({ alg: "EdDSA", kid: key.kid, typ: "flyball-config+jwt" })
    .setIssuer(`flyball:${slug}`)
    .setAudience(ctx.deviceId)
    .setSubject(ctx.machineId)
    .setIssuedAt(iat)
    .setExpirationTime(exp)
    .sign(key.privateKey);
  return { notModified: false as const, etag, body: { jws, expiresAt: new Date(exp * 1000).toISOString(), jwksUrl: `/api/v1/o/${slug}/jwks.json` } };
}

export async function acknowledgeConfig(ctx: DeviceContext, input: z.infer<typeof AckRequestSchema>) {
  const current = await getPool().query<{ id: string; config_version: number }>(
    "select id, config_version from loop where organisation_id = $1 and machine_id = $2 and key = $3",
    [ctx.organisationId, ctx.machineId, input.loop],
  );
  const row = current.rows[0];
  if (!row) throw new DomainError("unknown_loop", `This machine has no loop "${input.loop}".`, { status: 404 });
  if (input.version > row.config_version) throw new DomainError("unknown_version", `Version ${input.version} was never issued for loop "${input.loop}".`, { status: 409 });
  const applied = input.status === "applied";
  // The loop's acknowledgement, the gain set it now runs, and the release target (or its roll
  // back) that offered this version, in one statement.
  const matched = await getPool().query<{ n: string }>(
    `with l as (
       update loop set ack_status = $4, ack_reason = $5, acked_at = now(),
         applied_version = case when $4 = 'applied' then greatest(coalesce(applied_version, 0), $6) else applied_version end,
         applied_gain_set_id = case when $4 = 'applied' and $6 = config_version then gain_set_id else applied_gain_set_id end
       where organisation_id = $1 and machine_id = $2 and key = $3
       returning organisation_id, id
     ), offer as (
       update release_target rt set state = $4, acked_at = now(), reject_reason = $5
       from l where rt.organisation_id = l.organisation_id and rt.loop_id = l.id and rt.version = $6 and rt.state = 'offered'
       returning 1
     ), back as (
       update release_target rt set rollback_state = $4
       from l where rt.organisation_id = l.organisation_id and rt.loop_id = l.id and rt.rollback_version = $6 and rt.rollback_state = 'offered'
       returning 1
     )
     select (select count(*) from offer) + (select count(*) from back) as n`,
    [ctx.organisationId, ctx.machineId, input.loop, input.status, input.reason ?? null, input.version],
  );
  await recordAudit(getDb(), {
    organisationId: ctx.organisationId,
    actor: `device:${ctx.deviceId}`,
    action: applied ? "device.config_applied" : "device.config_rejected",
    targetType: "loop",
    targetId: row.id,
    detail: { loop: input.loop, version: input.version, reason: input.reason ?? null },
  });
  // A refusal of what a release (or its roll back) offered is a finding for the loop.
  if (!applied && Number(matched.rows[0]?.n ?? 0) > 0) {
    await openConfigRejectedFinding(getDb(), { organisationId: ctx.organisationId, loopId: row.id, reason: input.reason ?? "no reason given", version: input.version });
  }
  return { loop: input.loop, version: input.version, status: input.status, currentVersion: row.config_version };
}
