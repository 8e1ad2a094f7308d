// The caller's own alert e-mails: which kinds, from which severity, for which sites, and when
// a burst becomes one summary e-mail. Site managers choose only among their own sites (the
// server refuses any other).
import { data, Form, useNavigation } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listRegistryOptions } from "~/.server/fleet/registry";
import { getSiteScope } from "~/.server/fleet/scope";
import { getAlertSubscription, saveAlertSubscription } from "~/.server/health/alerts";
import { actionFailure } from "~/.server/http/errors";
import { KIND_LABELS, KIND_PHRASES, SEVERITY_LABELS } from "~/components/health/words";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { AlertSubscriptionSchema, FINDING_KINDS, FINDING_SEVERITIES } from "~/lib/health/api-types";
import type { Route } from "./+types/alerts";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const [subscription, options] = await Promise.all([getAlertSubscription(db, scope, { memberId: membership.memberId, role: membership.role }), listRegistryOptions(db, scope)]);
  return { subscription, sites: options.sites, email: membership.user.email, siteScoped: scope.siteIds !== null };
}

type ActionResult = { ok: boolean; message: string; errors?: Record<string, string> };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const form = await request.formData();
  const summaryRaw = String(form.get("summaryAfter") ?? "");
  const parsed = AlertSubscriptionSchema.safeParse({
    kinds: form.getAll("kinds").map(String),
    minSeverity: form.get("minSeverity"),
    siteIds: form.getAll("siteIds").map(String),
    summaryAfter: summaryRaw.trim() === "" ? Number.NaN : Number(summaryRaw),
  });
  if (!parsed.success) {
    const errors = Object.fromEntries(parsed.error.issues.map((i) => [String(i.path[0]), i.path[0] === "summaryAfter" ? "A whole number of minutes from 0 to 1440." : i.message]));
    return data<ActionResult>({ ok: false, message: "The settings were not saved.", errors }, { status: 400 });
  }
  const db = getDb();
  try {
    await saveAlertSubscription(db, await getSiteScope(db, membership), { memberId: membership.memberId, role: membership.role }, parsed.data);
    return data<ActionResult>({ ok: true, message: "Saved. New findings that match are e-mailed to you." });
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

export default function AlertsPage({ loaderData, actionData }: Route.ComponentProps) {
  const { subscription, sites, email, siteScoped } = loaderData;
  const busy = useNavigation().state === "submitting";
  const errors = actionData?.errors ?? {};
  return (
    <>
      <PageHeader title="Alert e-mails" description={<>Which findings are e-mailed to you at <span className="font-medium text-ink">{email}</span>. Every e-mail carries a link to stop them without signing in.</>} />
      <div className="px-5 py-5 sm:px-8">
        {actionData ? <div className="mb-4 max-w-xl"><Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice></div> : null}
        <Form method="post" className="max-w-xl space-y-6">
          <fieldset aria-describedby="kinds-help">
            <legend className="text-sm font-medium">Kinds of finding</legend>
            <p id="kinds-help" className={`text-xs ${errors.kinds ? "text-act" : "text-ink-faint"}`}>{errors.kinds ?? "Leave all unticked to receive no alert e-mails."}</p>
            <div className="mt-2 grid gap-1.5 sm:grid-cols-2">
              {FINDING_KINDS.map((k) => (
                <label key={k} className="flex items-start gap-2 text-sm">
                  <input type="checkbox" name="kinds" value={k} defaultChecked={subscription.kinds.includes(k)} className="mt-0.5 h-4 w-4 accent-[var(--color-accent)]" />
                  <span>{KIND_LABELS[k]} <span className="block text-xs text-ink-faint">{KIND_PHRASES[k]}</span></span>
                </label>
              ))}
            </div>
          </fieldset>

          <div>
            <label htmlFor="min-severity" className="block text-sm font-medium">Lowest severity</label>
            <select id="min-severity" name="minSeverity" defaultValue={subscription.minSeverity} aria-describedby="min-severity-help" className="mt-1 block w-full rounded-md border border-rule-strong bg-white px-3 py-2 text-sm">
              {FINDING_SEVERITIES.map((s) => <option key={s} value={s}>{SEVERITY_LABELS[s]} and above</option>)}
            </select>
            <p id="min-severity-help" className="mt-1 text-xs text-ink-faint">Findings below this severity stay on the findings page only.</p>
          </div>

          <fieldset aria-describedby="sites-help">
            <legend className="text-sm font-medium">Sites</legend>
            <p id="sites-help" className={`text-xs ${errors.siteIds ? "text-act" : "text-ink-faint"}`}>
              {errors.siteIds ?? (siteScoped ? "Only the sites assigned to you can be chosen." : "Leave all unticked for every site.")}
            </p>
            {sites.length === 0 ? (
              <p className="mt-2 text-sm text-ink-soft">No sites yet.</p>
            ) : (
              <div className="mt-2 grid gap-1.5 sm:grid-cols-2">
                {sites.map((s) => (
                  <label key={s.id} className="flex items-center gap-2 text-sm">
                    <input type="checkbox" name="siteIds" value={s.id} defaultChecked={subscription.siteIds.includes(s.id)} className="h-4 w-4 accent-[var(--color-accent)]" />
                    {s.name} <span className="text-xs text-ink-faint">{s.customerName}</span>
                  </label>
                ))}
              </div>
            )}
          </fieldset>

          <div>
            <label htmlFor="summary-after" className="block text-sm font-medium">Summarise bursts within</label>
            <div className="relative mt-1">
              <input id="summary-after" name="summaryAfter" type="number" inputMode="numeric" min={0} max={1440} step={1} required defaultValue={subscription.summaryAfter} aria-invalid={errors.summaryAfter ? true : undefined} aria-describedby="summary-after-help" className="block w-full rounded-md border border-rule-strong bg-white px-3 py-2 pr-20 text-sm tabular aria-invalid:border-act" />
              <span className="pointer-events-none absolute inset-y-0 right-3 flex items-center text-sm text-ink-faint">minutes</span>
            </div>
            <p id="summary-after-help" className={`mt-1 text-xs ${errors.summaryAfter ? "text-act" : "text-ink-faint"}`}>
              {errors.summaryAfter ?? "Findings that open within this many minutes of each other arrive as one summary e-mail. 0 sends each one."}
            </p>
          </div>

          <Button disabled={busy}>{busy ? "Saving…" : "Save alert settings"}</Button>
        </Form>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Alert e-mails · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
