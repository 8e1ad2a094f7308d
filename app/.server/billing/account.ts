// An organisation's billing: its row (created lazily), its Stripe customer (created lazily,
// with an idempotency key), checkout and portal sessions, and the summary the billing page and
// GET /api/v1/o/:slug/billing show (invoices and the next invoice's estimate come from Stripe).
import { and, count, eq, isNull } from "drizzle-orm";
import StripeSdk from "stripe";
import type Stripe from "stripe";
import type { Db } from "~/.server/db/client";
import { billingAccount, machine, member, organisation, user } from "~/.server/db/schema";
import { env } from "~/.server/env";
import { type BillingStatus, holdReason, type HoldReason, type Plan, TRIAL_DAYS } from "~/lib/billing/rules";
import { DomainError } from "~/lib/errors";
import { getMachinePrice } from "./stripe";

export type BillingAccount = typeof billingAccount.$inferSelect;

const DAY_MS = 24 * 3600 * 1000;

export async function countActiveMachines(db: Db, { organisationId }: { organisationId: string }): Promise<number> {
  const [row] = await db.select({ n: count() }).from(machine).where(and(eq(machine.organisationId, organisationId), eq(machine.status, "active")));
  return row?.n ?? 0;
}

/** The organisation's billing row; an organisation without one is on trial since its creation. */
export async function ensureBillingAccount(db: Db, { organisationId }: { organisationId: string }): Promise<BillingAccount> {
  const [existing] = await db.select().from(billingAccount).where(eq(billingAccount.organisationId, organisationId));
  if (existing) return existing;
  const [org] = await db.select({ createdAt: organisation.createdAt }).from(organisation).where(eq(organisation.id, organisationId));
  if (!org) throw new DomainError("not_found", "No such organisation.", { status: 404 });
  await db
    .insert(billingAccount)
    .values({ organisationId, trialEndsAt: new Date(org.createdAt.getTime() + TRIAL_DAYS * DAY_MS) })
    .onConflictDoNothing();
  const [row] = await db.select().from(billingAccount).where(eq(billingAccount.organisationId, organisationId));
  return row!;
}

export type BillingStanding = {
  plan: Plan;
  status: BillingStatus;
  trialEndsAt: Date;
  activeMachines: number;
  hold: HoldReason | null;
};

/** What the enforcement and the banner need: one row and one count, no call to Stripe. */
export async function getBillingStanding(db: Db, { organisationId }: { organisationId: string }, adding = 0): Promise<BillingStanding> {
  const account = await ensureBillingAccount(db, { organisationId });
  const activeMachines = await countActiveMachines(db, { organisationId });
  const input = { plan: account.plan as Plan, status: account.status as BillingStatus, trialEndsAt: account.trialEndsAt, activeMachines };
  return { ...input, hold: holdReason(input, new Date(), adding) };
}

export async function getOwners(db: Db, { organisationId }: { organisationId: string }) {
  return db
    .select({ userId: user.id, name: user.name, email: user.email })
    .from(member)
    .innerJoin(user, eq(user.id, member.userId))
    .where(and(eq(member.organizationId, organisationId), eq(member.role, "owner")))
    .orderBy(member.createdAt);
}

/** The organisation's Stripe customer, created on first need (one per organisation). */
export async function ensureStripeCustomer(db: Db, stripe: Stripe, { organisationId }: { organisationId: string }): Promise<string> {
  const account = await ensureBillingAccount(db, { organisationId });
  if (account.stripeCustomerId) return account.stripeCustomerId;
  const [org] = await db.select({ name: organisation.name, slug: organisation.slug }).from(organisation).where(eq(organisation.id, organisationId));
  const [owner] = await getOwners(db, { organisationId });
  // The same key with the same body answers the first customer again, so two requests racing
  // here (or a retry after a lost answer) make one customer.
  const customer = await stripe.customers.create(
    { name: org!.name, ...(owner ? { email: owner.email } : {}), metadata: { organisation_id: organisationId, organisation_slug: org!.slug } },
    { idempotencyKey: `flyball-customer-${organisationId}` },
  );
  await db
    .update(billingAccount)
    .set({ stripeCustomerId: customer.id, updatedAt: new Date() })
    .where(and(eq(billingAccount.organisationId, organisationId), isNull(billingAccount.stripeCustomerId)));
  const [row] = await db.select({ id: billingAccount.stripeCustomerId }).from(billingAccount).where(eq(billingAccount.organisationId, organisationId));
  return row!.id!;
}

function billingPageUrl(slug: string, query: string) {
  return `${env().BETTER_AUTH_URL.replace(/\/$/, "")}/o/${slug}/billing?${query}`;
}

function hasLiveSubscription(account: BillingAccount): boolean {
  return account.plan === "per_machine" && account.stripeSubscriptionId !== null && account.status !== "canceled";
}

/** A hosted checkout for the per-machine subscription, quantity = active machines (at least one). */
export async function createCheckout(db: Db, stripe: Stripe, { organisationId, slug }: { organisationId: string; slug: string }): Promise<{ url: string }> {
  const account = await ensureBillingAccount(db, { organisationId });
  if (hasLiveSubscription(account)) {
    throw new DomainError("subscription_exists", "This organisation already has a subscription; change the card or cancel it in the billing portal.", { status: 409 });
  }
  const customer = await ensureStripeCustomer(db, stripe, { organisationId });
  const price = await getMachinePrice(stripe);
  const quantity = Math.max(1, await countActiveMachines(db, { organisationId }));
  const session = await stripe.checkout.sessions.create({
    mode: "subscription",
    customer,
    client_reference_id: organisationId,
    line_items: [{ price: price.id, quantity }],
    subscription_data: { metadata: { organisation_id: organisationId } },
    metadata: { organisation_id: organisationId },
    success_url: billingPageUrl(slug, "checkout=done&session={CHECKOUT_SESSION_ID}"),
    cancel_url: billingPageUrl(slug, "checkout=cancelled"),
  });
  if (!session.url) throw new Error("Stripe answered a checkout session without a URL.");
  return { url: session.url };
}

/** The hosted portal (change the card, cancel), back to the billing page. */
export async function createPortal(db: Db, stripe: Stripe, { organisationId, slug }: { organisationId: string; slug: string }): Promise<{ url: string }> {
  const account = await ensureBillingAccount(db, { organisationId });
  if (!account.stripeCustomerId) {
    throw new DomainError("no_customer", "There is nothing to manage yet: start a subscription first.", { status: 409 });
  }
  const session = await stripe.billingPortal.sessions.create({ customer: account.stripeCustomerId, return_url: billingPageUrl(slug, "portal=back") });
  return { url: session.url };
}

const iso = (seconds: number | null | undefined) => (seconds === null || seconds === undefined ? null : new Date(seconds * 1000).toISOString());

export type BillingInvoice = {
  id: string;
  number: string | null;
  status: string | null;
  amountDue: number;
  amountPaid: number;
  currency: string;
  periodStart: string | null;
  periodEnd: string | null;
  hostedInvoiceUrl: string | null;
};

export type BillingSummary = {
  plan: Plan;
  status: BillingStatus;
  stripeCustomerId: string | null;
  subscriptionId: string | null;
  machinesBilled: number;
  activeMachines: number;
  trialEndsAt: string;
  currentPeriodEnd: string | null;
  nextInvoiceEstimate: { amount: number; currency: string };
  invoices: BillingInvoice[];
};

/** A renewal invoice's own period is the one that ended; its subscription line names the period billed. */
function billedPeriod(invoice: Stripe.Invoice): { start: number; end: number } {
  const line = invoice.lines.data.find((l) => l.parent?.subscription_item_details) ?? invoice.lines.data[0];
  return line ? { start: line.period.start, end: line.period.end } : { start: invoice.period_start, end: invoice.period_end };
}

export async function getBillingSummary(db: Db, stripe: Stripe, { organisationId }: { organisationId: string }): Promise<BillingSummary> {
  const account = await ensureBillingAccount(db, { organisationId });
  const activeMachines = await countActiveMachines(db, { organisationId });
  let invoices: BillingInvoice[] = [];
  if (account.stripeCustomerId) {
    const list = await stripe.invoices.list({ customer: account.stripeCustomerId, limit: 24 });
    invoices = list.data
      .filter((invoice) => invoice.status !== "draft")
      .map((invoice) => {
        const period = billedPeriod(invoice);
        return {
          id: invoice.id!,
          number: invoice.number,
          status: invoice.status,
          amountDue: invoice.amount_due,
          amountPaid: invoice.amount_paid,
          currency: invoice.currency,
          periodStart: iso(period.start),
          periodEnd: iso(period.end),
          hostedInvoiceUrl: invoice.hosted_invoice_url ?? null,
        };
      });
  }
  let nextInvoiceEstimate: { amount: number; currency: string };
  if (hasLiveSubscription(account) && account.stripeCustomerId) {
    try {
      const preview = await stripe.invoices.createPreview({ customer: account.stripeCustomerId, subscription: account.stripeSubscriptionId! });
      nextInvoiceEstimate = { amount: preview.amount_due, currency: preview.currency };
    } catch (error) {
      // Ended on Stripe before its webhook reached us: no next invoice.
      if (!(error instanceof StripeSdk.errors.StripeInvalidRequestError)) throw error;
      nextInvoiceEstimate = { amount: 0, currency: invoices[0]?.currency ?? "eur" };
    }
  } else if (account.plan === "trial") {
    // No subscription to preview yet: what the first month would cost at today's machine count.
    const price = await getMachinePrice(stripe);
    nextInvoiceEstimate = { amount: (price.unit_amount ?? 0) * Math.max(1, activeMachines), currency: price.currency };
  } else {
    nextInvoiceEstimate = { amount: 0, currency: invoices[0]?.currency ?? "eur" };
  }
  return {
    plan: account.plan as Plan,
    status: account.status as BillingStatus,
    stripeCustomerId: account.stripeCustomerId,
    subscriptionId: account.stripeSubscriptionId,
    machinesBilled: account.machinesBilled,
    activeMachines,
    trialEndsAt: account.trialEndsAt.toISOString(),
    currentPeriodEnd: account.currentPeriodEnd?.toISOString() ?? null,
    nextInvoiceEstimate,
    invoices,
  };
}

