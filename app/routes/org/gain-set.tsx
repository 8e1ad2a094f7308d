import { data, Form, Link, redirect, useActionData, useNavigation } from "react-router";
import { z } from "zod";
import { requireCapability, requireCapableMember, requireMembership } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { approveGainSet, createGainSet, getGainSet, proposeGainSet, rejectGainSet } from "~/.server/tuning/gain-sets";
import { formatGain, formatNumber, formatTime } from "~/components/bench/format";
import { GainSetStateBadge, STATE_WORDS } from "~/components/gain-sets/state-badge";
import { LiveChangeCaution } from "~/components/live-change-caution";
import { PageHeader } from "~/components/org-shell";
import { Button, buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import { DomainError } from "~/lib/errors";
import { CHECK_LABELS } from "~/lib/gain-sets/checks";
import { ApproveGainSetSchema, CreateGainSetSchema, ProposeGainSetSchema, RejectGainSetSchema } from "~/lib/gain-sets/schemas";
import type { Route } from "./+types/gain-set";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:read");
  const gainSet = await getGainSet(getDb(), { organisationId: membership.organisation.id, id: params.id });
  if (!gainSet) throw data({ message: "No such gain set." }, { status: 404 });
  return {
    gainSet,
    me: membership.user.id,
    canTune: can(membership.role, "tuning:use"),
    canApprove: can(membership.role, "gainset:approve"),
    canOverride: membership.role === "owner" || membership.role === "admin",
    slug: membership.organisation.slug,
  };
}

type ActionResult = { ok: true; message: string } | { ok: false; message: string; failed?: { name: string; message: string }[] };

const IntentSchema = z.object({ intent: z.enum(["propose", "approve", "reject", "revise"]) });

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireMembership(request, params.slug);
  const form = Object.fromEntries(await request.formData());
  const intent = IntentSchema.safeParse(form);
  if (!intent.success) return data<ActionResult>({ ok: false, message: "Unknown action." }, { status: 400 });
  const db = getDb();
  const scope = { organisationId: membership.organisation.id, actor: membership.user.id, id: params.id };
  const text = (name: string) => (typeof form[name] === "string" ? (form[name] as string) : "");
  try {
    switch (intent.data.intent) {
      case "propose": {
        requireCapability(membership, "tuning:use");
        const reason = text("overrideReason").trim();
        const input = ProposeGainSetSchema.safeParse(reason ? { override: { reason } } : {});
        if (!input.success) return data<ActionResult>({ ok: false, message: input.error.issues[0]!.message }, { status: 400 });
        const done = await proposeGainSet(db, { ...scope, role: membership.role, override: input.data.override });
        return data<ActionResult>({ ok: true, message: `Proposed v${done.version}${done.checks.passed ? " — every check passed" : " with the failed checks overridden"}. A second engineer can now approve it.` });
      }
      case "approve": {
        requireCapability(membership, "gainset:approve");
        const input = ApproveGainSetSchema.safeParse({ comment: text("comment") });
        if (!input.success) return data<ActionResult>({ ok: false, message: input.error.issues[0]!.message }, { status: 400 });
        const done = await approveGainSet(db, { ...scope, comment: input.data.comment ?? "" });
        return data<ActionResult>({ ok: true, message: `Approved v${done.version}. It can now be released.` });
      }
      case "reject": {
        requireCapability(membership, "gainset:approve");
        const input = RejectGainSetSchema.safeParse({ comment: text("comment") });
        if (!input.success) return data<ActionResult>({ ok: false, message: input.error.issues[0]!.message }, { status: 400 });
        const done = await rejectGainSet(db, { ...scope, comment: input.data.comment });
        return data<ActionResult>({ ok: true, message: `Rejected v${done.version}.` });
      }
      case "revise": {
        requireCapability(membership, "tuning:use");
        const current = await getGainSet(db, { organisationId: scope.organisationId, id: params.id });
        if (!current) throw data({ message: "No such gain set." }, { status: 404 });
        // Left to the schema: an empty field is absent, anything else a number or its issue.
        const num = (name: string) => (form[name] === undefined || form[name] === "" ? undefined : Number(form[name]));
        const gains = current.form === "parallel" ? { kp: num("kp"), ki: num("ki"), kd: num("kd") } : { kc: num("kc"), ti: text("ti") === "" ? null : num("ti"), td: num("td") };
        const input = CreateGainSetSchema.safeParse({
          loopTemplateId: current.loopTemplateId,
          form: current.form,
          gains,
          filterN: num("filterN") ?? null,
          setpointWeight: num("setpointWeight"),
          antiWindup: text("antiWindup") || undefined,
          integratorMin: num("integratorMin"),
          integratorMax: num("integratorMax"),
          outputMin: current.outputMin,
          outputMax: current.outputMax,
          trackingTime: current.trackingTime,
          note: text("note"),
          basedOnId: current.id,
        });
        if (!input.success) {
          const issue = input.error.issues[0]!;
          return data<ActionResult>({ ok: false, message: `${issue.path.join(".") || "form"}: ${issue.message}` }, { status: 400 });
        }
        const created = await createGainSet(db, { organisationId: scope.organisationId, actor: scope.actor, input: input.data, origin: current.origin });
        return redirect(`/o/${membership.organisation.slug}/gain-sets/${created.id}`);
      }
    }
  } catch (error) {
    if (error instanceof DomainError && error.code === "checks_failed") {
      return data<ActionResult>({ ok: false, message: "Not proposed: a check failed.", failed: (error.issues ?? []).map((i) => ({ name: String(i.path[0]), message: i.message })) }, { status: 422 });
    }
    return actionFailure<ActionResult>(error);
  }
}

/** The bench's figures (simulated on the bench's own plant model), in words and units. */
const FIGURE_LABELS: Record<string, [string, string?]> = {
  gainMargin: ["Gain margin"],
  phaseMargin: ["Phase margin", "°"],
  peakSensitivity: ["Peak sensitivity Ms"],
  overshootPercent: ["Overshoot", "%"],
  settlingTime: ["Settling time", "s"],
  iae: ["IAE"],
  saturatedFraction: ["Time saturated", "%"],
};

function Row({ label, children, unit }: { label: string; children: React.ReactNode; unit?: string }) {
  return (
    <div className="flex justify-between gap-4 py-1">
      <dt className="text-ink-soft">{label}</dt>
      <dd className="text-right tabular text-ink">
        {children}
        {unit ? <span className="text-ink-faint"> {unit}</span> : null}
      </dd>
    </div>
  );
}

const TEXTAREA = "mt-1 block w-full rounded-md border border-rule-strong bg-white px-2.5 py-1.5 text-sm font-normal";
const INPUT = "mt-1 block w-full rounded-md border border-rule-strong bg-white px-2.5 py-1.5 text-sm font-normal tabular";

export default function GainSetPage({ loaderData }: Route.ComponentProps) {
  const { gainSet: g, me, canTune, canApprove, canOverride, slug } = loaderData;
  const result = useActionData<typeof action>() as ActionResult | undefined;
  const busy = useNavigation().state !== "idle";
  const base = `/o/${slug}`;
  const t = g.template;
  const entered = g.enteredGains;
  const isProposer = g.proposedBy?.id === me;
  const failedChecks = g.checks?.checks.some((c) => !c.passed) ?? false;
  return (
    <>
      <PageHeader
        title={`${t.name} · v${g.version}`}
        crumbs={[{ label: "Gain sets", to: `${base}/gain-sets` }, { label: `${t.key} v${g.version}` }]}
        description={
          <span className="inline-flex flex-wrap items-center gap-2">
            <GainSetStateBadge state={g.state} /> {t.modelName} · loop {t.key} · drafted by {g.createdBy?.name ?? "–"}
            {g.basedOn ? <> · revision of <Link to={`${base}/gain-sets/${g.basedOn.id}`} className="link-in-text">v{g.basedOn.version}</Link></> : null}
          </span>
        }
        action={g.basedOn ? <Link to={`${base}/gain-sets/compare?a=${g.basedOn.id}&b=${g.id}`} className={buttonClass("secondary")}>Compare with v{g.basedOn.version}</Link> : null}
      />
      <div className="grid gap-5 px-4 py-5 sm:px-8 lg:grid-cols-[minmax(0,1fr)_minmax(0,22rem)]">
        <div className="min-w-0 space-y-5">
          {result ? (
            <Notice tone={result.ok ? "success" : "error"} title={result.ok ? "Done" : "Not done"}>
              {result.message}
              {!result.ok && result.failed?.length ? (
                <ul className="mt-1 list-disc pl-5">
                  {result.failed.map((f) => (
                    <li key={f.name}><strong>{CHECK_LABELS[f.name as keyof typeof CHECK_LABELS] ?? f.name}:</strong> {f.message}</li>
                  ))}
                </ul>
              ) : null}
            </Notice>
          ) : null}

          <section aria-labelledby="gains-title" className="rounded-md border border-rule bg-white px-4 py-3">
            <h2 id="gains-title" className="text-sm font-semibold text-ink">Gains</h2>
            <div className="mt-2 grid gap-x-8 text-sm sm:grid-cols-2">
              <div>
                <p className="text-xs text-ink-faint">As entered ({g.form} form)</p>
                <dl>
                {entered.form === "parallel" ? (
                  <>
                    <Row label="kp">{formatGain(entered.kp)}</Row>
                    <Row label="ki" unit="1/s">{formatGain(entered.ki)}</Row>
                    <Row label="kd" unit="s">{formatGain(entered.kd)}</Row>
                  </>
                ) : (
                  <>
                    <Row label="Kc">{formatGain(entered.kc)}</Row>
                    <Row label="Ti" unit={entered.ti === null ? undefined : "s"}>{entered.ti === null ? "no integral action" : formatGain(entered.ti)}</Row>
                    <Row label="Td" unit="s">{formatGain(entered.td)}</Row>
                  </>
                )}
                </dl>
              </div>
              <div>
                <p className="text-xs text-ink-faint">What devices receive (parallel)</p>
                <dl>
                  <Row label="kp">{formatGain(g.gains.kp)}</Row>
                  <Row label="ki" unit="1/s">{formatGain(g.gains.ki)}</Row>
                  <Row label="kd" unit="s">{formatGain(g.gains.kd)}</Row>
                </dl>
              </div>
            </div>
            <p className="mt-2 text-xs text-ink-faint">
              Safety envelope of {t.key}: kp {formatGain(t.envelope.kp[0])}…{formatGain(t.envelope.kp[1])}, ki {formatGain(t.envelope.ki[0])}…{formatGain(t.envelope.ki[1])} 1/s, kd {formatGain(t.envelope.kd[0])}…{formatGain(t.envelope.kd[1])} s.
            </p>
          </section>

          <section aria-labelledby="settings-title" className="rounded-md border border-rule bg-white px-4 py-3">
            <h2 id="settings-title" className="text-sm font-semibold text-ink">Controller settings</h2>
            <dl className="mt-2 grid gap-x-8 text-sm sm:grid-cols-2">
              <Row label="Derivative filter N">{g.filterN === null ? "10 (default)" : formatNumber(g.filterN, 3)}</Row>
              <Row label="Set-point weight b">{formatNumber(g.setpointWeight, 3)}</Row>
              <Row label="Anti-windup">{g.antiWindup === "clamp" ? "Clamping" : "Back-calculation"}</Row>
              <Row label="Tracking time Tt" unit={g.trackingTime === null ? undefined : "s"}>{g.trackingTime === null ? "default" : formatTime(g.trackingTime)}</Row>
              <Row label="Output range" unit={t.outputUnit}>{formatNumber(g.outputMin, 4)} … {formatNumber(g.outputMax, 4)}</Row>
              <Row label="Integrator range" unit={t.outputUnit}>{formatNumber(g.integratorMin, 4)} … {formatNumber(g.integratorMax, 4)}</Row>
              <Row label="Sample period" unit="s">{formatTime(g.samplePeriodS)}</Row>
            </dl>
          </section>

          <section aria-labelledby="origin-title" className="rounded-md border border-rule bg-white px-4 py-3">
            <h2 id="origin-title" className="text-sm font-semibold text-ink">Where they came from</h2>
            <dl className="mt-2 grid gap-x-8 text-sm sm:grid-cols-2">
              <Row label="Rule">{g.origin.rule ?? "entered by hand"}{g.origin.controller ? ` (${g.origin.controller})` : ""}</Row>
              <Row label="Bench plant model">
                {g.origin.model ? `K ${formatGain(g.origin.model.gain)}, τ ${formatTime(g.origin.model.timeConstant)} s, θ ${formatTime(g.origin.model.deadTime)} s` : "–"}
              </Row>
              {Object.entries(g.origin.figures).map(([name, value]) => (
                <Row key={name} label={`${FIGURE_LABELS[name]?.[0] ?? name} (bench)`} unit={value === null ? undefined : FIGURE_LABELS[name]?.[1]}>
                  {name === "saturatedFraction" && value !== null ? formatNumber(value * 100, 3) : formatNumber(value, 4)}
                </Row>
              ))}
            </dl>
            <p className="mt-2 text-sm text-ink-soft"><span className="font-medium text-ink">Rationale: </span>{g.note || "none given"}</p>
          </section>

          <section aria-labelledby="checks-title" className="rounded-md border border-rule bg-white px-4 py-3">
            <h2 id="checks-title" className="text-sm font-semibold text-ink">Checks {g.state === "draft" ? <span className="font-normal text-ink-faint">(what proposing would find now)</span> : g.checks ? <span className="font-normal text-ink-faint">(run when proposed)</span> : null}</h2>
            {g.checks ? (
              <>
                <ul className="mt-2 space-y-1.5 text-sm">
                  {g.checks.checks.map((c) => (
                    <li key={c.name} className="flex gap-2">
                      <span aria-hidden="true" className={c.passed ? "text-steady" : "text-act"}>{c.passed ? "✓" : "✕"}</span>
                      <span>
                        <span className={`font-medium ${c.passed ? "text-steady" : "text-act"}`}>{c.passed ? "Passed" : "Failed"}</span> · <span className="font-medium text-ink">{CHECK_LABELS[c.name]}</span>
                        <span className="block text-ink-soft">{c.message}</span>
                      </span>
                    </li>
                  ))}
                </ul>
                {g.checks.margins ? (
                  <p className="mt-2 text-xs text-ink-faint tabular">
                    On the reference model: gain margin {g.checks.margins.gainMargin === null ? "∞" : formatNumber(g.checks.margins.gainMargin, 3)} (minimum {formatNumber(t.minGainMargin, 3)}), phase margin {formatNumber(g.checks.margins.phaseMargin, 3)}° (minimum {formatNumber(t.minPhaseMarginDeg, 3)}°), delay margin {formatTime(g.checks.margins.delayMargin)} s, Ms {formatNumber(g.checks.margins.peakSensitivity, 3)}.
                  </p>
                ) : null}
                {g.overrideReason ? <Notice tone="caution" title="Failed checks overridden">{g.overrideReason}</Notice> : null}
              </>
            ) : (
              <p className="mt-2 text-sm text-ink-soft">Not checked: it was never proposed.</p>
            )}
          </section>

          <section aria-labelledby="history-title" className="rounded-md border border-rule bg-white px-4 py-3">
            <h2 id="history-title" className="text-sm font-semibold text-ink">History</h2>
            <ol className="mt-2 space-y-2 text-sm">
              {g.history.map((h, i) => (
                <li key={i} className="flex flex-wrap gap-x-2">
                  <time dateTime={h.at} className="tabular text-ink-faint">{new Date(h.at).toISOString().replace("T", " ").slice(0, 16)} UTC</time>
                  <span className="font-medium text-ink">{STATE_WORDS[h.state]}</span>
                  <span className="text-ink-soft">by {h.actor.name}</span>
                  {h.comment ? <span className="basis-full text-ink-soft">“{h.comment}”</span> : null}
                </li>
              ))}
            </ol>
          </section>
        </div>

        <section className="min-w-0 space-y-4" aria-label="Actions">
          {g.state === "draft" && canTune ? (
            <Form method="post" className="space-y-2 rounded-md border border-rule bg-white px-4 py-3">
              <h2 className="text-sm font-semibold text-ink">Propose for approval</h2>
              <p className="text-xs text-ink-faint">Proposing fixes this version and runs the checks; a second engineer then approves or rejects it.</p>
              {canOverride && failedChecks ? (
                <label className="block text-xs font-medium text-ink">
                  Reason to override the failed checks
                  <textarea name="overrideReason" rows={3} className={TEXTAREA} placeholder="Only when you are sure; it is recorded in the audit log." />
                  <span className="mt-1 block font-normal text-ink-faint">Owners and admins only. Leave empty to propose without overriding.</span>
                </label>
              ) : null}
              <Button type="submit" name="intent" value="propose" disabled={busy}>Propose v{g.version}</Button>
            </Form>
          ) : null}

          {g.state === "proposed" && canApprove ? (
            <div className="space-y-3 rounded-md border border-rule bg-white px-4 py-3">
              <h2 className="text-sm font-semibold text-ink">Review</h2>
              <p className="text-xs text-ink-faint">Proposed by {g.proposedBy?.name ?? "–"}.</p>
              {isProposer ? (
                <Notice tone="info" title="You proposed this gain set">A second member must approve it. You may still withdraw it by rejecting it with a comment.</Notice>
              ) : (
                <>
                  <LiveChangeCaution step="approve" />
                  <Form method="post" className="space-y-2">
                    <label className="block text-xs font-medium text-ink">
                      Approval comment <span className="font-normal text-ink-faint">(optional)</span>
                      <textarea name="comment" rows={2} className={TEXTAREA} />
                    </label>
                    <Button type="submit" name="intent" value="approve" disabled={busy}>Approve v{g.version}</Button>
                  </Form>
                </>
              )}
              <Form method="post" className="space-y-2 border-t border-rule pt-3">
                <label className="block text-xs font-medium text-ink">
                  Why reject it? <span className="font-normal text-ink-faint">(required)</span>
                  <textarea name="comment" rows={2} required className={TEXTAREA} />
                </label>
                <Button type="submit" name="intent" value="reject" variant="danger" disabled={busy}>Reject v{g.version}</Button>
              </Form>
            </div>
          ) : null}

          {canTune ? (
            <details className="rounded-md border border-rule bg-white px-4 py-3">
              <summary className="cursor-pointer text-sm font-semibold text-ink">Make a new version from this one</summary>
              <Form method="post" className="mt-2 space-y-2">
                <p className="text-xs text-ink-faint">A gain set never changes once saved: your changes become a new draft of {t.key}.</p>
                <div className="grid grid-cols-3 gap-2">
                  {(entered.form === "parallel"
                    ? [["kp", entered.kp, ""], ["ki", entered.ki, "1/s"], ["kd", entered.kd, "s"]]
                    : [["kc", entered.kc, ""], ["ti", entered.ti, "s"], ["td", entered.td, "s"]]
                  ).map(([name, value, unit]) => (
                    <label key={name as string} className="text-xs font-medium text-ink">
                      {name as string} {unit ? <span className="font-normal text-ink-faint">{unit as string}</span> : null}
                      <input name={name as string} inputMode="decimal" defaultValue={value === null ? "" : String(value)} className={INPUT} />
                    </label>
                  ))}
                </div>
                <div className="grid grid-cols-2 gap-2">
                  <label className="text-xs font-medium text-ink">Filter N<input name="filterN" inputMode="decimal" defaultValue={g.filterN ?? ""} className={INPUT} /></label>
                  <label className="text-xs font-medium text-ink">Set-point weight b<input name="setpointWeight" inputMode="decimal" defaultValue={g.setpointWeight} className={INPUT} /></label>
                  <label className="text-xs font-medium text-ink">Integrator min<input name="integratorMin" inputMode="decimal" defaultValue={g.integratorMin} className={INPUT} /></label>
                  <label className="text-xs font-medium text-ink">Integrator max<input name="integratorMax" inputMode="decimal" defaultValue={g.integratorMax} className={INPUT} /></label>
                </div>
                <label className="block text-xs font-medium text-ink">
                  Anti-windup
                  <select name="antiWindup" defaultValue={g.antiWindup} className={INPUT}>
                    <option value="clamp">Clamping</option>
                    <option value="back_calculation">Back-calculation</option>
                  </select>
                </label>
                <label className="block text-xs font-medium text-ink">
                  Rationale
                  <textarea name="note" rows={2} defaultValue={g.note} className={TEXTAREA} />
                </label>
                <Button type="submit" name="intent" value="revise" variant="secondary" disabled={busy}>Save as a new draft</Button>
              </Form>
            </details>
          ) : null}
        </section>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [{ title: d ? `${d.gainSet.template.key} v${d.gainSet.version} · Gain sets · Flyball` : "Gain set · Flyball" }];

export { ErrorBoundary } from "~/components/route-error";
