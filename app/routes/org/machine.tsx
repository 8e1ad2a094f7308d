import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { requireCapability, requireCapableMember } from "~/.server/auth/guards";
import { requestQuantitySync } from "~/.server/billing/quantity";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";

import { decommissionMachine, getMachine, regenerateEnrolmentCode, revokeMachineDevice } from "~/.server/fleet/machines";
import { getSiteScope } from "~/.server/fleet/scope";
import { listFindings } from "~/.server/health/findings";
import { getLoopHealth } from "~/.server/health/overview";
import { createRetuneRequest } from "~/.server/health/retune";
import { formatAgo, formatDateTime, formatSig } from "~/components/fleet/format";
import { HealthBadge } from "~/components/fleet/health-badge";
import { LoopTrends } from "~/components/fleet/loop-trends";
import { LoopHealthPanel } from "~/components/health/loop-health-panel";
import { SeverityBadge } from "~/components/health/overview-panels";
import { pickLoop } from "~/components/health/worst-loop";
import { KIND_LABELS, STATE_LABELS } from "~/components/health/words";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import { FindingsQuerySchema, RetuneCreateSchema } from "~/lib/health/api-types";
import type { Route } from "./+types/machine";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const machine = await getMachine(db, scope, params.id);
  if (!machine) throw data({ message: "No such machine." }, { status: 404 });
  // The page opens on the machine's worst loop unless `?loop=` names another of its loops.
  const selected = pickLoop(machine.loops, new URL(request.url).searchParams.get("loop"));
  const unresolved = (state: "open" | "acknowledged") => listFindings(db, scope, FindingsQuerySchema.parse({ machineId: machine.id, state, sort: "severity", dir: "desc", pageSize: 100 }));
  const [loopHealth, open, acknowledged] = await Promise.all([selected ? getLoopHealth(db, scope, selected.id) : null, unresolved("open"), unresolved("acknowledged")]);
  return {
    machine,
    slug: membership.organisation.slug,
    selectedLoopId: selected?.id ?? null,
    loopHealth,
    findings: [...open.items, ...acknowledged.items],
    canManage: can(membership.role, "machines:manage"),
    canRequestRetune: can(membership.role, "retune:request"),
  };
}

const IntentSchema = z.object({ intent: z.enum(["enrolment-code", "revoke-device", "decommission", "retune"]) });

type ActionResult = { ok: boolean; message: string; code?: { code: string; expiresAt: string }; retune?: boolean; errors?: Record<string, string> };

export async function action({ request, params }: Route.ActionArgs) {
  const member = await requireCapableMember(request, params.slug, "fleet:read");
  const form = await request.formData();
  const parsed = IntentSchema.safeParse(Object.fromEntries(form));
  if (!parsed.success) return data<ActionResult>({ ok: false, message: "Unknown action." }, { status: 400 });
  const db = getDb();
  if (parsed.data.intent === "retune") {
    requireCapability(member, "retune:request");
    const input = RetuneCreateSchema.safeParse({ machineId: params.id, loopId: form.get("loopId"), observation: form.get("observation") ?? "" });
    if (!input.success) {
      const errors = Object.fromEntries(input.error.issues.map((i) => [String(i.path[0]), i.message]));
      return data<ActionResult>({ ok: false, retune: true, message: "The retune request was not sent.", errors }, { status: 400 });
    }
    try {
      const created = await createRetuneRequest(db, await getSiteScope(db, member), member.user.id, input.data);
      return data<ActionResult>({
        ok: true,
        retune: true,
        message: created.notified
          ? "Retune request sent to the OEM's engineers. Follow its state under Retune requests."
          : "Retune request filed; the e-mail to the engineers did not go out, but they see it in their queue. Follow its state under Retune requests.",
      });
    } catch (error) {
      const failure = actionFailure<ActionResult>(error);
      return data<ActionResult>({ ...failure.data, retune: true }, failure.init ?? undefined);
    }
  }
  const membership = requireCapability(member, "machines:manage");
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
  const { machine, slug, canManage, canRequestRetune, selectedLoopId, loopHealth, findings } = loaderData;
  const selectedLoop = machine.loops.find((l) => l.id === selectedLoopId) ?? null;
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
        {actionData && !actionData.retune ? (
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

        {selectedLoop ? (
          <nav aria-label="Choose a loop" className="flex flex-wrap gap-1.5">
            {machine.loops.map((l) => (
              <Link
                key={l.id}
                to={`?loop=${l.id}`}
                preventScrollReset
                aria-current={l.id === selectedLoop.id ? "page" : undefined}
                className={`inline-flex items-center gap-1.5 rounded-md border px-2 py-1 text-xs ${l.id === selectedLoop.id ? "border-accent bg-accent-wash font-medium text-accent-strong" : "border-rule bg-white text-ink-soft hover:bg-paper-deep"}`}
              >
                {l.name}
                <HealthBadge band={l.health.band} score={l.health.score} />
              </Link>
            ))}
          </nav>
        ) : null}
        {selectedLoop && loopHealth ? <LoopHealthPanel health={loopHealth} loopName={selectedLoop.name} reportHref={`/o/${slug}/reports/loop/${selectedLoop.id}`} /> : null}

        <section aria-labelledby="machine-findings-heading" className="rounded-xl border border-rule bg-white p-4">
          <div className="flex flex-wrap items-baseline justify-between gap-2">
            <h2 id="machine-findings-heading" className="font-semibold">Open findings on this machine</h2>
            <Link to={`/o/${slug}/findings?machineId=${machine.id}`} className="text-sm text-accent hover:underline">All findings of {machine.serial}</Link>
          </div>
          {findings.length === 0 ? (
            <p className="mt-2 text-sm text-ink-soft">No open findings: none of this machine's loops has tripped a limit.</p>
          ) : (
            <ul className="mt-2 divide-y divide-rule text-sm">
              {findings.map((f) => (
                <li key={f.id} className={`flex flex-wrap items-center gap-x-3 gap-y-0.5 py-1.5 ${f.loopId === selectedLoopId ? "" : "opacity-90"}`}>
                  <SeverityBadge severity={f.severity} />
                  <Link to={`/o/${slug}/findings/${f.id}`} className="font-medium text-accent hover:underline">{KIND_LABELS[f.kind]}</Link>
                  <span className="font-mono text-xs text-ink-faint">{f.loopKey}</span>
                  <span className="min-w-0 flex-1 basis-60 text-ink-soft">{f.summary}</span>
                  <span className="text-xs text-ink-faint">{STATE_LABELS[f.state]} · {formatAgo(f.updatedAt)}</span>
                </li>
              ))}
            </ul>
          )}
        </section>

        {canRequestRetune && active ? (
          <section aria-labelledby="retune-heading" className="rounded-xl border border-rule bg-white p-4">
            <h2 id="retune-heading" className="font-semibold">Ask the OEM for a retune</h2>
            <p className="mt-1 max-w-xl text-sm text-ink-soft">Tell the machine builder's engineers what you observe. They see it in their queue, and you see their answer under <Link to={`/o/${slug}/retune-requests`} className="link-in-text">Retune requests</Link>.</p>
            {actionData?.retune ? <div className="mt-2"><Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice></div> : null}
            <Form method="post" className="mt-3 max-w-md space-y-3">
              <input type="hidden" name="intent" value="retune" />
              <div>
                <label htmlFor="retune-loop" className="block text-sm font-medium">Loop</label>
                <select id="retune-loop" name="loopId" defaultValue={selectedLoop?.id ?? ""} aria-describedby="retune-loop-help" className="mt-1 block w-full rounded-md border border-rule-strong bg-white px-3 py-2 text-sm">
                  <option value="">Not sure / the whole machine</option>
                  {machine.loops.map((l) => <option key={l.id} value={l.id}>{l.name} ({l.key})</option>)}
                </select>
                <p id="retune-loop-help" className="mt-1 text-xs text-ink-faint">Optional: the loop you think is the trouble.</p>
              </div>
              <div>
                <label htmlFor="retune-observation" className="block text-sm font-medium">What you observe</label>
                <textarea id="retune-observation" name="observation" rows={3} required minLength={3} maxLength={4000} aria-invalid={actionData?.errors?.observation ? true : undefined} aria-describedby="retune-observation-help" className="mt-1 block w-full rounded-md border border-rule-strong bg-white px-3 py-2 text-sm aria-invalid:border-act" />
                <p id="retune-observation-help" className={`mt-1 text-xs ${actionData?.errors?.observation ? "text-act" : "text-ink-faint"}`}>{actionData?.errors?.observation ?? "E.g. zone 2 takes 40 minutes to reach temperature after a colour change."}</p>
              </div>
              <Button disabled={busy}>Send retune request</Button>
            </Form>
          </section>
        ) : null}

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

        {machine.loops.length ? <LoopTrends slug={slug} initialLoopId={selectedLoopId ?? undefined} loops={machine.loops.map((l) => ({ id: l.id, key: l.key, name: l.name, unit: l.unit, thresholds: l.thresholds }))} /> : null}

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
