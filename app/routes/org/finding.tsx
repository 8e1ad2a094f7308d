// One finding: what was seen, the metric over time with its threshold and the window that
// tripped it, what it means and what to check first, its history, and the triage forms.
import { data, Form, Link, useNavigation } from "react-router";
import { requireCapability, requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { getSiteScope } from "~/.server/fleet/scope";
import { acknowledgeFinding, getFinding, getFindingSeries, resolveFinding } from "~/.server/health/findings";
import { actionFailure } from "~/.server/http/errors";
import { formatDateTime, formatSig } from "~/components/fleet/format";
import { formatSeconds } from "~/components/health/words";
import { FindingChart } from "~/components/health/finding-chart";
import { SeverityBadge } from "~/components/health/overview-panels";
import { figureLabel, formatFigure, KIND_GUIDES, KIND_LABELS, metricLabel, STATE_LABELS } from "~/components/health/words";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import { DomainError } from "~/lib/errors";
import { AcknowledgeSchema, ResolveSchema } from "~/lib/health/api-types";
import type { Route } from "./+types/finding";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  try {
    const [finding, series] = await Promise.all([getFinding(db, scope, params.id), getFindingSeries(db, scope, params.id)]);
    return { finding, series, slug: membership.organisation.slug, canTriage: can(membership.role, "findings:triage") };
  } catch (error) {
    // Another organisation's, another site's or a malformed id: the same "not found".
    if (error instanceof DomainError && error.status === 404) throw data({ message: "No such finding." }, { status: 404 });
    throw error;
  }
}

type ActionResult = { ok: boolean; message: string; field?: string };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = requireCapability(await requireCapableMember(request, params.slug, "fleet:read"), "findings:triage");
  const form = Object.fromEntries(await request.formData());
  const comment = typeof form.comment === "string" ? form.comment : "";
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  try {
    if (form.intent === "acknowledge") {
      const parsed = AcknowledgeSchema.safeParse({ comment: comment || undefined });
      if (!parsed.success) return data<ActionResult>({ ok: false, message: parsed.error.issues[0].message, field: "acknowledge" }, { status: 400 });
      await acknowledgeFinding(db, scope, membership.user.id, params.id, parsed.data.comment);
      return data<ActionResult>({ ok: true, message: "Acknowledged: the finding stays listed until it is resolved or clears by itself." });
    }
    if (form.intent === "resolve") {
      const parsed = ResolveSchema.safeParse({ comment });
      if (!parsed.success) return data<ActionResult>({ ok: false, message: parsed.error.issues[0].message, field: "resolve" }, { status: 400 });
      await resolveFinding(db, scope, membership.user.id, params.id, parsed.data.comment);
      return data<ActionResult>({ ok: true, message: "Resolved. If the loop trips the same limit again, a new finding opens." });
    }
    return data<ActionResult>({ ok: false, message: "Unknown action." }, { status: 400 });
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

function figure(value: number | null, unit: string): string {
  if (value === null) return "–";
  if (unit === "share") return `${Math.round(value * 100)} %`;
  if (unit === "s") return formatSeconds(value);
  return `${formatSig(value, 3)} ${unit}`;
}

export default function FindingPage({ loaderData, actionData }: Route.ComponentProps) {
  const { finding, series, slug, canTriage } = loaderData;
  const base = `/o/${slug}`;
  const busy = useNavigation().state === "submitting";
  const guide = KIND_GUIDES[finding.kind];
  const ev = finding.evidence;
  const share = series.unit === "share";
  const scale = share ? 100 : 1;
  const unit = share ? "% of the hour" : series.unit;
  const points = series.points.flatMap((p) => (p.value === null ? [] : [{ t: new Date(p.hour).getTime(), v: p.value * scale }]));
  const window = series.windowStart && series.windowEnd ? { start: new Date(series.windowStart).getTime(), end: new Date(series.windowEnd).getTime() } : null;
  const title = `${KIND_LABELS[finding.kind]} on ${finding.machineSerial}`;
  return (
    <>
      <PageHeader
        title={title}
        crumbs={[{ label: "Findings", to: `${base}/findings` }, { label: `${KIND_LABELS[finding.kind]} · ${finding.machineSerial} ${finding.loopKey}` }]}
        description={finding.summary}
        action={
          <>
            <Link to={`${base}/machines/${finding.machineId}?loop=${finding.loopId}`} className="text-sm text-accent hover:underline">Machine {finding.machineSerial}, loop {finding.loopKey}</Link>
          </>
        }
      />
      <div className="space-y-5 px-5 py-5 sm:px-8">
        {actionData ? <Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice> : null}
        <dl className="grid grid-cols-2 gap-x-6 gap-y-3 rounded-xl border border-rule bg-white p-4 text-sm sm:grid-cols-3 lg:grid-cols-6">
          <div><dt className="text-xs text-ink-faint">Severity</dt><dd><SeverityBadge severity={finding.severity} /></dd></div>
          <div><dt className="text-xs text-ink-faint">State</dt><dd className="font-medium">{STATE_LABELS[finding.state]}</dd></div>
          <div><dt className="text-xs text-ink-faint">Opened</dt><dd className="tabular">{formatDateTime(finding.openedAt)}</dd></div>
          <div><dt className="text-xs text-ink-faint">Last updated</dt><dd className="tabular">{formatDateTime(finding.updatedAt)}</dd></div>
          <div><dt className="text-xs text-ink-faint">{metricLabel(ev.metric)}</dt><dd className="tabular font-medium">{figure(ev.value, ev.unit)}</dd></div>
          <div><dt className="text-xs text-ink-faint">Threshold</dt><dd className="tabular">{figure(ev.threshold, ev.unit)}</dd></div>
        </dl>

        <section aria-labelledby="chart-heading" className="rounded-xl border border-rule bg-white p-4">
          <h2 id="chart-heading" className="font-semibold">The metric over time</h2>
          <div className="mt-2">
            <FindingChart
              title={metricLabel(series.metric)}
              unit={unit}
              points={points}
              threshold={series.threshold === null ? null : series.threshold * scale}
              window={window}
              format={share ? (v) => Math.round(v).toString() : undefined}
            />
          </div>
        </section>

        <div className="grid gap-4 lg:grid-cols-2">
          <section aria-labelledby="means-heading" className="rounded-xl border border-rule bg-white p-4">
            <h2 id="means-heading" className="font-semibold">What it means</h2>
            <p className="mt-1 text-sm text-ink-soft">{guide.means}</p>
            <h3 className="mt-3 text-sm font-semibold">What to check first</h3>
            <ol className="mt-1 list-inside list-decimal space-y-1 text-sm text-ink-soft">
              {guide.checkFirst.map((c) => <li key={c}>{c}</li>)}
            </ol>
          </section>
          <section aria-labelledby="evidence-heading" className="rounded-xl border border-rule bg-white p-4">
            <h2 id="evidence-heading" className="font-semibold">Evidence</h2>
            <p className="mt-1 text-xs text-ink-faint">
              {ev.windowStart ? <>Window {formatDateTime(ev.windowStart)} to {formatDateTime(ev.windowEnd)}.</> : "No window recorded."}
            </p>
            <dl className="mt-2 divide-y divide-rule text-sm">
              {Object.entries(ev.figures).map(([name, value]) => (
                <div key={name} className="flex justify-between gap-4 py-1">
                  <dt className="text-ink-soft">{figureLabel(name)}</dt>
                  <dd className="tabular">{formatFigure(name, value)}</dd>
                </div>
              ))}
            </dl>
          </section>
        </div>

        {canTriage && finding.state !== "resolved" ? (
          <section aria-labelledby="triage-heading" className="rounded-xl border border-rule bg-white p-4">
            <h2 id="triage-heading" className="font-semibold">Triage</h2>
            <div className="mt-2 grid gap-4 md:grid-cols-2">
              {finding.state === "open" ? (
                <Form method="post" className="max-w-md space-y-2">
                  <input type="hidden" name="intent" value="acknowledge" />
                  <label htmlFor="ack-comment" className="block text-sm font-medium">Acknowledge</label>
                  <textarea id="ack-comment" name="comment" rows={2} maxLength={2000} aria-describedby="ack-help" className="block w-full rounded-md border border-rule-strong bg-white px-3 py-2 text-sm" />
                  <p id="ack-help" className="text-xs text-ink-faint">Optional: say who is looking at it. The finding stays until resolved.</p>
                  <Button variant="secondary" disabled={busy}>Acknowledge</Button>
                </Form>
              ) : null}
              <Form method="post" className="max-w-md space-y-2">
                <input type="hidden" name="intent" value="resolve" />
                <label htmlFor="resolve-comment" className="block text-sm font-medium">Resolve</label>
                <textarea id="resolve-comment" name="comment" rows={2} required maxLength={2000} aria-invalid={actionData?.field === "resolve" ? true : undefined} aria-describedby="resolve-help" className="block w-full rounded-md border border-rule-strong bg-white px-3 py-2 text-sm aria-invalid:border-act" />
                <p id="resolve-help" className={`text-xs ${actionData?.field === "resolve" ? "text-act" : "text-ink-faint"}`}>{actionData?.field === "resolve" ? actionData.message : "Required: what was done (e.g. heater band replaced on zone 2)."}</p>
                <Button disabled={busy}>Resolve</Button>
              </Form>
            </div>
          </section>
        ) : null}

        <section aria-labelledby="history-heading" className="rounded-xl border border-rule bg-white p-4">
          <h2 id="history-heading" className="font-semibold">History</h2>
          <ol className="mt-2 space-y-2 text-sm">
            {finding.history.map((h, i) => (
              <li key={`${h.at}-${i}`} className="border-l-2 border-rule pl-3">
                <p><span className="font-medium">{STATE_LABELS[h.state]}</span> <span className="text-ink-faint">· {formatDateTime(h.at)} · {h.actorName ?? "Flyball"}</span></p>
                {h.comment ? <p className="text-ink-soft">{h.comment}</p> : null}
              </li>
            ))}
          </ol>
        </section>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [{ title: `${d ? `${KIND_LABELS[d.finding.kind]} on ${d.finding.machineSerial}` : "Finding"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
