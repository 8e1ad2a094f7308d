// /o/:slug/billing — the owner's page: plan, status, machines billed, the next invoice, invoice
// history, checkout and the portal, and handing ownership over. Others get 403 on the server.
import { data, Form, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { createCheckout, createPortal, getBillingSummary } from "~/.server/billing/account";
import { listOwnershipCandidates, transferOwnership } from "~/.server/billing/ownership";
import { getStripe } from "~/.server/billing/stripe";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { SelectField } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { type HoldReason, holdReason, STATUS_LABELS, TRIAL_MACHINE_LIMIT } from "~/lib/billing/rules";
import { ROLE_LABELS, isRole } from "~/lib/access/capabilities";
import type { Route } from "./+types/billing";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "billing:manage");
  const db = getDb();
  const [summary, candidates] = await Promise.all([
    getBillingSummary(db, getStripe(), { organisationId: membership.organisation.id }),
    listOwnershipCandidates(db, { organisationId: membership.organisation.id, exceptUserId: membership.user.id }),
  ]);
  const url = new URL(request.url);
  return { summary, candidates, returned: url.searchParams.get("checkout"), now: new Date().toISOString() };
}

const IntentSchema = z.object({ intent: z.enum(["checkout", "portal", "transfer"]) });
const TransferSchema = z.object({ memberId: z.string().min(1, "Choose a member.") });

type ActionResult = { ok: boolean; message: string };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "billing:manage");
  const form = await request.formData();
  const intent = IntentSchema.safeParse(Object.fromEntries(form));
  if (!intent.success) return data<ActionResult>({ ok: false, message: "Unknown action." }, { status: 400 });
  const db = getDb();
  const input = { organisationId: membership.organisation.id, slug: membership.organisation.slug };
  try {
    switch (intent.data.intent) {
      case "checkout":
        return redirect((await createCheckout(db, getStripe(), input)).url);
      case "portal":
        return redirect((await createPortal(db, getStripe(), input)).url);
      case "transfer": {
        const parsed = TransferSchema.safeParse(Object.fromEntries(form));
        if (!parsed.success) return data<ActionResult>({ ok: false, message: "Choose the member who becomes the owner." }, { status: 400 });
        const done = await db.transaction((tx) => transferOwnership(tx, { organisationId: membership.organisation.id, fromMemberId: membership.memberId, actor: membership.user.id, toMemberId: parsed.data.memberId }));
        return redirect(`/o/${membership.organisation.slug}?ownership=${encodeURIComponent(done.newOwner)}`);
      }
    }
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

export const meta: Route.MetaFunction = () => [{ title: "Billing · Flyball" }];

function howToResume(hold: HoldReason): string {
  if (hold === "past_due" || hold === "unpaid") return "Choose “Change card or cancel” and enter a card that works: the open invoice is charged to it at once, and registering machines and starting releases work again as soon as it is paid.";
  return "Start the per-machine subscription below: registering machines and starting releases work again as soon as the first payment goes through.";
}

function money(cents: number, currency: string) {
  return new Intl.NumberFormat("en-GB", { style: "currency", currency: currency.toUpperCase() }).format(cents / 100);
}

function day(iso: string | null) {
  return iso ? new Date(iso).toLocaleDateString("en-GB", { day: "numeric", month: "short", year: "numeric", timeZone: "UTC" }) : "—";
}

const INVOICE_STATUS: Record<string, string> = { paid: "Paid", open: "Open, not paid", void: "Void", uncollectible: "Uncollectible", draft: "Draft" };

function Fact({ label, value, note }: { label: string; value: string; note?: string }) {
  return (
    <div className="rounded-xl border border-rule bg-white px-4 py-3">
      <dt className="text-xs uppercase tracking-wide text-ink-faint">{label}</dt>
      <dd className="mt-1 text-lg font-semibold tabular-nums text-ink">{value}</dd>
      {note ? <dd className="text-xs text-ink-faint">{note}</dd> : null}
    </div>
  );
}

export default function Billing({ loaderData, actionData }: Route.ComponentProps) {
  const { summary, candidates, returned, now } = loaderData;
  const busy = useNavigation().state === "submitting";
  const trial = summary.plan === "trial";
  const hold = holdReason({ plan: summary.plan, status: summary.status, trialEndsAt: new Date(summary.trialEndsAt), activeMachines: summary.activeMachines }, new Date(now));
  const live = summary.plan === "per_machine" && summary.status !== "canceled";
  const daysLeft = Math.ceil((Date.parse(summary.trialEndsAt) - Date.parse(now)) / 86_400_000);
  const statusLabel = !trial ? STATUS_LABELS[summary.status] : daysLeft <= 0 ? "Trial ended" : `Trial, ${daysLeft} ${daysLeft === 1 ? "day" : "days"} left`;
  return (
    <>
      <PageHeader title="Billing" description="Flyball is billed per active machine each month. Only the owner sees this page." />
      <div className="max-w-4xl space-y-6 px-5 py-6 sm:px-8">
        {returned === "done" && !live ? (
          <Notice tone="info" title="Payment received">The plan changes here as soon as the payment service confirms the subscription, usually within seconds. Reload the page if it still shows the trial.</Notice>
        ) : returned === "done" ? (
          <Notice tone="success" title="Subscription active">Thank you: the per-machine plan is active.</Notice>
        ) : returned === "cancelled" ? (
          <Notice tone="caution" title="No subscription was started">The checkout was left without a payment (for example, the card was declined). Your plan is unchanged; you can try again with another card.</Notice>
        ) : null}
        {actionData && !actionData.ok ? <Notice tone="error">{actionData.message}</Notice> : null}
        {hold ? <Notice tone="error" title="How to resume new machines and releases">{howToResume(hold)}</Notice> : null}

        <section aria-labelledby="plan-heading" className="space-y-3">
          <h2 id="plan-heading" className="font-semibold">Plan</h2>
          <dl className="grid grid-cols-2 gap-3 sm:grid-cols-3">
            <Fact label="Plan" value={trial ? "Trial" : "Per machine"} note={trial ? `Up to ${TRIAL_MACHINE_LIMIT} machines, free` : "Monthly, per active machine"} />
            <Fact label="Status" value={statusLabel} />
            <Fact label="Machines billed" value={trial ? "—" : String(summary.machinesBilled)} note={`${summary.activeMachines} active now`} />
            {trial ? <Fact label="Trial ends" value={day(summary.trialEndsAt)} /> : <Fact label="Period ends" value={day(summary.currentPeriodEnd)} />}
            <Fact label={trial ? "First month would be" : "Next invoice (estimate)"} value={money(summary.nextInvoiceEstimate.amount, summary.nextInvoiceEstimate.currency)} />
          </dl>
          <div className="flex flex-wrap gap-2">
            {!live ? (
              <Form method="post">
                <input type="hidden" name="intent" value="checkout" />
                <Button type="submit" disabled={busy}>Start the per-machine subscription</Button>
              </Form>
            ) : null}
            {summary.stripeCustomerId ? (
              <Form method="post">
                <input type="hidden" name="intent" value="portal" />
                <Button type="submit" variant={live ? "primary" : "secondary"} disabled={busy}>Change card or cancel</Button>
              </Form>
            ) : null}
          </div>
        </section>

        <section aria-labelledby="invoices-heading" className="space-y-3">
          <h2 id="invoices-heading" className="font-semibold">Invoices</h2>
          {summary.invoices.length === 0 ? (
            <p className="text-sm text-ink-soft">No invoices yet.</p>
          ) : (
            <div role="region" aria-labelledby="invoices-heading" tabIndex={0} className="overflow-x-auto rounded-xl border border-rule bg-white">
              <table className="w-full text-sm">
                <thead className="bg-paper text-left text-xs uppercase tracking-wide text-ink-faint">
                  <tr>
                    <th scope="col" className="px-3 py-2">Number</th>
                    <th scope="col" className="px-3 py-2">Period</th>
                    <th scope="col" className="px-3 py-2 text-right">Amount</th>
                    <th scope="col" className="px-3 py-2">Status</th>
                    <th scope="col" className="px-3 py-2"><span className="sr-only">Invoice</span></th>
                  </tr>
                </thead>
                <tbody>
                  {summary.invoices.map((invoice) => (
                    <tr key={invoice.id} className="border-t border-rule">
                      <td className="px-3 py-2 font-mono text-xs">{invoice.number ?? invoice.id}</td>
                      <td className="px-3 py-2 tabular-nums">{day(invoice.periodStart)} – {day(invoice.periodEnd)}</td>
                      <td className="px-3 py-2 text-right tabular-nums">{money(invoice.amountDue, invoice.currency)}</td>
                      <td className={`px-3 py-2 ${invoice.status === "open" ? "font-medium text-act" : "text-ink-soft"}`}>{INVOICE_STATUS[invoice.status ?? ""] ?? invoice.status}</td>
                      <td className="px-3 py-2">{invoice.hostedInvoiceUrl ? <a className="text-accent hover:underline" href={invoice.hostedInvoiceUrl}>View<span className="sr-only"> invoice {invoice.number ?? invoice.id}</span></a> : null}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </section>

        <section aria-labelledby="owner-heading" className="space-y-3">
          <h2 id="owner-heading" className="font-semibold">Hand over ownership</h2>
          <p className="text-sm text-ink-soft">The new owner manages billing and members; you stay in the organisation as an admin.</p>
          {candidates.length === 0 ? (
            <p className="text-sm text-ink-soft">Invite another member first.</p>
          ) : (
            <Form method="post" className="flex flex-wrap items-end gap-2">
              <input type="hidden" name="intent" value="transfer" />
              <SelectField label="New owner" name="memberId" className="min-w-64" defaultValue="">
                <option value="" disabled>Choose a member…</option>
                {candidates.map((c) => <option key={c.memberId} value={c.memberId}>{c.name} ({isRole(c.role) ? ROLE_LABELS[c.role] : c.role})</option>)}
              </SelectField>
              <Button type="submit" variant="danger" disabled={busy}>Hand over ownership</Button>
            </Form>
          )}
        </section>
      </div>
    </>
  );
}

export { ErrorBoundary } from "~/components/route-error";
