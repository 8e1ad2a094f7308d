import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import { requireCapability, requireCapableMember } from "~/.server/auth/guards";
import { requestQuantitySync } from "~/.server/billing/quantity";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";

import { decommissionMachine, getMachine, regenerateEnrolmentCode, revokeMachineDevice } from "~/.server/fleet/machines";
import { getSiteScope } from "~/.server/fleet/scope";
import { formatAgo, formatDateTime, formatSig } from "~/components/fleet/format";
import { HealthBadge } from "~/components/fleet/health-badge";
import { LoopTrends } from "~/components/fleet/loop-trends";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import type { Route } from "./+types/machine";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const machine = await getMachine(db, await getSiteScope(db, membership), params.id);
  if (!machine) throw data({ message: "No such machine." }, { status: 404 });
  return { machine, slug: membership.organisation.slug, canManage: can(membership.role, "machines:manage") };
}

const IntentSchema = z.object({ intent: z.enum(["enrolment-code", "revoke-device", "decommission"]) });

type ActionResult = { ok: boolean; message: string; code?: { code: string; expiresAt: string } };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = requireCapability(await requireCapableMember(request, params.slug, "fleet:read"), "machines:manage");
  const parsed = IntentSchema.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data<ActionResult>({ ok: false, message: "Unknown action." }, { status: 400 });
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const input = { machineId: params.id, actor: membership.user.id };
  try {
    switch (parsed.data.intent) {
      case "enrolment-code": {
        const code = await regenerateEnrolmentCode(db, scope, input);
        return data<ActionResult>({ ok: true, message: "A new enrolment code was issued; any earlier unused code no longer works.", code: { code: code.code, expiresAt: code.expiresAt.toISOString() } });
      }
      case "revoke-device": {
        const { revoked } = await revokeMachineDevice(db, scope, input);
        return data<ActionResult>({ ok: true, message: revoked ? "The device key was revoked. Issue a new enrolment code to enrol the controller again." : "No enrolled device key to revoke." });
      }
      case "decommission": {
        const result = await decommissionMachine(db, scope, input);
        if (result.changed) await requestQuantitySync(db, { organisationId: scope.organisationId });
        return data<ActionResult>({ ok: true, message: "The machine is decommissioned; its device can no longer call the API." });
      }
    }
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

const ENROLMENT_WORDS = { enrolled: "Enrolled", revoked: "Key revoked", not_enrolled: "Not enrolled" } as const;

export default function MachinePage({ loaderData, actionData }: Route.ComponentProps) {
  const { machine, slug, canManage } = loaderData;
  const busy = useNavigation().state === "submitting";
  const active = machine.status === "active";
  const activeDevice = machine.devices.find((d) => d.status === "active");
  return (
    <>
      <PageHeader
        title={machine.serial}
        crumbs={[{ label: "Machines", to: `/o/${slug}/machines` }, { label: machine.serial }]}
        description={<>{machine.model.name} at {machine.site.name}, {machine.customer.name}</>}
        action={<HealthBadge band={machine.health.band} score={machine.health.score} />}
      />
      <div className="space-y-6 px-5 py-5 sm:px-8">
        {actionData ? (
          <Notice tone={actionData.ok ? "success" : "error"}>
            {actionData.message}
            {actionData.code ? (
              <span className="mt-2 block">
                Enrolment code, shown only now: <code className="select-all rounded bg-white px-1.5 py-0.5 font-mono text-sm text-ink">{actionData.code.code}</code>
                <span className="block text-xs text-ink-faint">Valid until {formatDateTime(actionData.code.expiresAt)}, for one enrolment.</span>
              </span>
            ) : null}
          </Notice>
        ) : null}
        {!active ? <Notice tone="info" title="Decommissioned">This machine is out of service. Its history stays readable.</Notice> : null}

        <dl className="grid grid-cols-2 gap-x-6 gap-y-3 rounded-xl border border-rule bg-white p-4 text-sm sm:grid-cols-3 lg:grid-cols-6">
          {[
            ["Customer", machine.customer.name],
            ["Site", `${machine.site.name} (${machine.site.timeZone})`],
            ["Model", machine.model.name],
            ["Firmware", machine.firmware ?? "–"],
            ["Device", ENROLMENT_WORDS[machine.enrolment]],
            ["Last seen", formatAgo(machine.lastSeenAt)],
          ].map(([label, value]) => (
            <div key={label} className="min-w-0">
              <dt className="text-xs text-ink-faint">{label}</dt>
              <dd className="truncate font-medium">{value}</dd>
            </div>
          ))}
        </dl>

        <section aria-labelledby="loops-heading">
          <h2 id="loops-heading" className="font-semibold">Loops</h2>
          <div role="region" tabIndex={0} aria-labelledby="loops-heading" className="mt-2 overflow-x-auto rounded-xl border border-rule bg-white">
            <table className="w-full min-w-[52rem] text-sm">
              <thead className="sticky top-0 bg-paper text-left text-xs uppercase tracking-wide text-ink-faint">
                <tr>
                  <th scope="col" className="px-3 py-2 font-medium">Loop</th>
                  <th scope="col" className="px-3 py-2 font-medium">Health</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">kp</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">ki</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">kd</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">Version</th>
                  <th scope="col" className="px-3 py-2 font-medium">Device says</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">Last digest</th>
                </tr>
              </thead>
              <tbody className="divide-y divide-rule">
                {machine.loops.map((l) => (
                  <tr key={l.id}>
                    <td className="px-3 py-1.5">
                      <span className="font-medium">{l.name}</span> <span className="font-mono text-xs text-ink-faint">{l.key}</span>
                      {l.health.reasons.length && l.health.band !== "silent" ? <span className="block text-xs text-ink-soft">{l.health.reasons.join(" ")}</span> : null}
                    </td>
                    <td className="px-3 py-1.5"><HealthBadge band={l.health.band} score={l.health.score} /></td>
                    <td className="whitespace-nowrap px-3 py-1.5 text-right tabular">{formatSig(l.gains.kp)}<span className="ml-0.5 text-xs text-ink-faint">{l.outputUnit}/{l.unit}</span></td>
                    <td className="px-3 py-1.5 text-right tabular">{formatSig(l.gains.ki)}<span className="ml-0.5 text-xs text-ink-faint">/s</span></td>
                    <td className="px-3 py-1.5 text-right tabular">{formatSig(l.gains.kd)}<span className="ml-0.5 text-xs text-ink-faint">s</span></td>
                    <td className="px-3 py-1.5 text-right tabular">{l.configVersion}{l.appliedVersion !== l.configVersion ? <span className="block text-xs text-watch">applied {l.appliedVersion ?? "none"}</span> : null}</td>
                    <td className="px-3 py-1.5 text-ink-soft">{l.ackStatus ? `${l.ackStatus === "applied" ? "Applied" : "Refused"} ${formatAgo(l.ackedAt)}${l.ackReason ? `: ${l.ackReason}` : ""}` : "No acknowledgement yet"}</td>
                    <td className="whitespace-nowrap px-3 py-1.5 text-right tabular text-ink-soft">{formatAgo(l.lastDigestAt)}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        </section>

        {machine.loops.length ? <LoopTrends slug={slug} loops={machine.loops.map((l) => ({ id: l.id, key: l.key, name: l.name, unit: l.unit, thresholds: l.thresholds }))} /> : null}

        <section aria-labelledby="enrolment-heading" className="rounded-xl border border-rule bg-white p-4">
          <h2 id="enrolment-heading" className="font-semibold">Enrolment</h2>
          <p className="mt-1 text-sm text-ink-soft">
            {activeDevice
              ? <>Enrolled {formatDateTime(activeDevice.enrolledAt)} with an {activeDevice.alg} key (thumbprint <code className="font-mono text-xs">{activeDevice.thumbprint.slice(0, 16)}…</code>).</>
              : machine.pendingEnrolmentCode
                ? <>Waiting for the controller to enrol. The current code is valid until {formatDateTime(machine.pendingEnrolmentCode.expiresAt)}.</>
                : <>No device is enrolled and no code is open. Issue a code and enter it on the controller.</>}
          </p>
          {canManage && active ? (
            <div className="mt-3 flex flex-wrap gap-2">
              <Form method="post"><input type="hidden" name="intent" value="enrolment-code" /><Button variant="secondary" disabled={busy}>Issue new enrolment code</Button></Form>
              {activeDevice ? (
                <Form method="post" onSubmit={(e) => { if (!confirm("Revoke this device key? The controller stops reaching Flyball until it enrols again.")) e.preventDefault(); }}>
                  <input type="hidden" name="intent" value="revoke-device" /><Button variant="danger" disabled={busy}>Revoke device key</Button>
                </Form>
              ) : null}
              <Form method="post" onSubmit={(e) => { if (!confirm(`Decommission ${machine.serial}? Its device is refused from now on.`)) e.preventDefault(); }}>
                <input type="hidden" name="intent" value="decommission" /><Button variant="danger" disabled={busy}>Decommission</Button>
              </Form>
            </div>
          ) : null}
          {machine.devices.length > 1 ? (
            <p className="mt-3 text-xs text-ink-faint">{machine.devices.length - 1} earlier device {machine.devices.length === 2 ? "key" : "keys"} revoked.</p>
          ) : null}
        </section>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [{ title: `${d?.machine.serial ?? "Machine"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
