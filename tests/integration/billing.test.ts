// Billing through the local Stripe, driven only by the `stripe` SDK and the app's own HTTP API:
// a subscription made on the fake reaches the app through webhooks, the quantity follows the
// machines, a failed renewal holds new machines (402) but never a running machine's digests,
// a cancellation arrives too; the trial's limits; who may see billing; a restarted fake.
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { and, eq } from "drizzle-orm";
import type Stripe from "stripe";
import { afterAll, describe, expect, it } from "vitest";
import { ensureBillingAccount } from "~/.server/billing/account";
import { requireActiveSubscription } from "~/.server/billing/enforce";
import { auditEvent, billingAccount, member, organisation } from "~/.server/db/schema";
import { getStripe } from "~/.server/billing/stripe";
import type { BillingSummary } from "~/.server/billing/account";
import { DomainError } from "~/lib/errors";
import { createStripeFake } from "../../fakes/stripe/server";
import { seedDemoBilling } from "../../scripts/seed/billing";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { createTeam, createTestFleet, uniqueSuffix } from "../factories";
import { freePort } from "../support/app-process";
import { closeDb, db } from "../support/db";
import { APP_URL, get, inbox, postForm, postJson, signIn } from "../support/http";
import { customerOnClock, eventually, machinePrice, STRIPE_BASE_URL, stripeAt, WEBHOOK_SECRET } from "../support/stripe";

const stripe = stripeAt();
const DAY = 86400;
afterAll(closeDb);

const billing = async (slug: string, session: Awaited<ReturnType<typeof signIn>>): Promise<BillingSummary> => {
  const response = await get(`/api/v1/o/${slug}/billing`, session);
  expect(response.status).toBe(200);
  return response.json();
};

describe("a subscription made on the local Stripe", () => {
  it("reaches the app, follows the machines, holds new machines after a failed renewal while digests flow, and ends when cancelled", async () => {
    const team = await createTeam(db(), ["owner"]);
    const slug = team.organisation.slug;
    const owner = await signIn(team.people[0]!.email);
    const fleet = await createTestFleet(db(), { organisationId: team.organisation.id, machinesPerSite: 1 });
    const price = await machinePrice(stripe);

    // As an operator would in Stripe's dashboard: a customer on a test clock, a card that pays, a subscription.
    const { clock, customer } = await customerOnClock(stripe, "pm_card_visa", { metadata: { organisation_id: team.organisation.id } });
    const subscription = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price.id, quantity: 2 }], metadata: { organisation_id: team.organisation.id } });
    const active = await eventually("active in the app", async () => {
      const summary = await billing(slug, owner);
      return summary.status === "active" ? summary : null;
    });
    expect(active).toMatchObject({ plan: "per_machine", stripeCustomerId: customer.id, subscriptionId: subscription.id, machinesBilled: 2, activeMachines: 2 });
    expect(active.currentPeriodEnd).toBe(new Date(subscription.items.data[0]!.current_period_end * 1000).toISOString());
    expect(active.invoices).toHaveLength(1);
    expect(active.invoices[0]).toMatchObject({ status: "paid", amountDue: 2 * 2900, amountPaid: 2 * 2900, currency: "eur" });
    expect(active.invoices[0]!.hostedInvoiceUrl).toMatch(new RegExp(`^${STRIPE_BASE_URL}/invoices/in_`));
    expect(active.nextInvoiceEstimate).toEqual({ amount: 2 * 2900, currency: "eur" });
    expect(Object.keys(active).sort()).toEqual(["activeMachines", "currentPeriodEnd", "invoices", "machinesBilled", "nextInvoiceEstimate", "plan", "status", "stripeCustomerId", "subscriptionId", "trialEndsAt"]);

    // Registering a machine raises the quantity on Stripe (a job, coalesced per organisation).
    for (const n of [1, 2]) {
      const created = await postJson(`/api/v1/o/${slug}/machines`, { serial: `Q-${n}-${uniqueSuffix()}`, modelId: fleet.model.id, siteId: fleet.sites[0].id }, owner);
      expect(created.status).toBe(201);
    }
    const raised = await eventually("quantity 4 on Stripe", async () => {
      const sub = await stripe.subscriptions.retrieve(subscription.id);
      return sub.items.data[0]!.quantity === 4 ? sub : null;
    });
    expect(raised.items.data[0]!.quantity).toBe(4);
    // Decommissioning lowers it again.
    const decommissioned = await postJson(`/api/v1/o/${slug}/machines/${fleet.machines[1]!.id}/decommission`, {}, owner);
    expect(decommissioned.status).toBe(200);
    await eventually("quantity 3 on Stripe", async () => (await stripe.subscriptions.retrieve(subscription.id)).items.data[0]!.quantity === 3);
    await eventually("3 billed in the app", async () => (await billing(slug, owner)).machinesBilled === 3);

    // A running machine.
    const device = new DeviceClient(APP_URL, await createDeviceIdentity("EdDSA"));
    expect((await device.enrol(fleet.machines[0]!.enrolmentCode, "1.0.0")).status).toBe(201);

    // The card now fails; the clock passes the period's end.
    const declining = await stripe.paymentMethods.attach("pm_card_chargeDeclined", { customer: customer.id });
    await stripe.customers.update(customer.id, { invoice_settings: { default_payment_method: declining.id } });
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: raised.items.data[0]!.current_period_end + DAY });
    const failed = await stripe.invoices.list({ customer: customer.id, status: "open" });
    expect(failed.data).toHaveLength(1);
    const pastDue = await eventually("past due in the app", async () => {
      const summary = await billing(slug, owner);
      return summary.status === "past_due" ? summary : null;
    });
    expect(pastDue.invoices.find((i) => i.id === failed.data[0]!.id)).toMatchObject({ status: "open", amountPaid: 0 });
    const mail = await eventually("the owner's e-mail", async () => (await inbox(team.people[0]!.email)).find((m) => m.subject.includes("failed")));
    expect(mail.text).toContain("declined");

    // New machines are refused (API, page, import); the running machine's digests and config are not.
    const refused = await postJson(`/api/v1/o/${slug}/machines`, { serial: `Q-X-${uniqueSuffix()}`, modelId: fleet.model.id, siteId: fleet.sites[0].id }, owner);
    expect(refused.status).toBe(402);
    expect((await refused.json()).error).toMatchObject({ code: "subscription_inactive" });
    const page = await postForm(`/o/${slug}/machines/new`, { serial: `Q-Y-${uniqueSuffix()}`, modelId: fleet.model.id, siteId: fleet.sites[0].id }, owner);
    expect(page.status).toBe(402);
    const csv = `serial,model,site,firmware\nQ-Z-${uniqueSuffix()},${fleet.model.name},${fleet.sites[0].name},1.0.0\n`;
    const imported = await fetch(`${APP_URL}/api/v1/o/${slug}/machines/import?mode=valid-rows`, { method: "POST", headers: { "content-type": "text/csv", origin: APP_URL, cookie: owner.cookie }, body: csv });
    expect(imported.status).toBe(402);
    await expect(requireActiveSubscription(db(), team.organisation.id)).rejects.toMatchObject({ status: 402, code: "subscription_inactive" });
    await expect(requireActiveSubscription(db(), team.organisation.id)).rejects.toBeInstanceOf(DomainError);

    const posted = await device.postDigests([sampleDigest("temp", 1, new Date(Date.now() - 3 * 60_000))]);
    expect(posted.status).toBe(200);
    expect((await posted.json()).accepted).toBe(1);
    expect((await device.getConfig()).status).toBe(200);

    // Every organisation page says why and how to fix it.
    const overview = await (await get(`/o/${slug}`, owner)).text();
    expect(overview).toContain("New machines and releases are paused");
    expect(overview).toContain(`/o/${slug}/billing`);

    // Cancelled directly on the fake: the app follows.
    await stripe.subscriptions.cancel(subscription.id);
    await eventually("cancelled in the app", async () => (await billing(slug, owner)).status === "canceled");
    expect((await postJson(`/api/v1/o/${slug}/machines`, { serial: `Q-C-${uniqueSuffix()}`, modelId: fleet.model.id, siteId: fleet.sites[0].id }, owner)).status).toBe(402);
  }, 120_000);
});

describe("the trial", () => {
  it("takes up to five active machines until its end, then asks for the subscription", async () => {
    const team = await createTeam(db(), ["owner", "viewer"]);
    const slug = team.organisation.slug;
    const owner = await signIn(team.people[0]!.email);
    const fleet = await createTestFleet(db(), { organisationId: team.organisation.id, machinesPerSite: 2 });
    const summary = await billing(slug, owner);
    expect(summary).toMatchObject({ plan: "trial", status: "trialing", stripeCustomerId: null, subscriptionId: null, machinesBilled: 0, activeMachines: 4, currentPeriodEnd: null, invoices: [] });
    const [org] = await db().select({ createdAt: organisation.createdAt }).from(organisation).where(eq(organisation.id, team.organisation.id));
    expect(Date.parse(summary.trialEndsAt) - org!.createdAt.getTime()).toBe(14 * DAY * 1000);
    expect(summary.nextInvoiceEstimate).toEqual({ amount: 4 * 2900, currency: "eur" });

    const register = (serial: string) => postJson(`/api/v1/o/${slug}/machines`, { serial, modelId: fleet.model.id, siteId: fleet.sites[0].id }, owner);
    expect((await register(`T5-${uniqueSuffix()}`)).status).toBe(201);
    const sixth = await register(`T6-${uniqueSuffix()}`);
    expect(sixth.status).toBe(402);
    expect((await sixth.json()).error.code).toBe("subscription_inactive");
    await requireActiveSubscription(db(), team.organisation.id); // five machines: releases still fine

    await db().update(billingAccount).set({ trialEndsAt: new Date(Date.now() - 1000) }).where(eq(billingAccount.organisationId, team.organisation.id));
    await expect(requireActiveSubscription(db(), team.organisation.id)).rejects.toMatchObject({ status: 402, code: "subscription_inactive" });
    const viewerPage = await (await get(`/o/${slug}`, await signIn(team.people[1]!.email))).text();
    expect(viewerPage).toContain("trial has ended");
    expect(viewerPage).toContain("Ask the organisation");
    expect(viewerPage).not.toContain(`/o/${slug}/billing`);
  }, 120_000);
});

describe("who may see billing", () => {
  it("lets the owner only; other roles get 403 on every billing API and the page; another organisation 404", async () => {
    const team = await createTeam(db(), ["owner", "admin", "engineer", "viewer", "site_manager"]);
    const other = await createTeam(db(), ["owner"]);
    const slug = team.organisation.slug;
    const owner = await signIn(team.people[0]!.email);

    const checkout = await postJson(`/api/v1/o/${slug}/billing/checkout`, {}, owner);
    expect(checkout.status).toBe(200);
    const { url } = (await checkout.json()) as { url: string };
    expect(url).toMatch(new RegExp(`^${STRIPE_BASE_URL}/pay/cs_test_`));
    const session: Stripe.Checkout.Session = await stripe.checkout.sessions.retrieve(url.split("/pay/")[1]!);
    expect(session).toMatchObject({ mode: "subscription", client_reference_id: team.organisation.id, status: "open" });
    expect(session.success_url).toBe(`${APP_URL}/o/${slug}/billing?checkout=done&session={CHECKOUT_SESSION_ID}`);
    // One customer per organisation, however often checkout is started.
    await postJson(`/api/v1/o/${slug}/billing/checkout`, {}, owner);
    const customers = (await stripe.customers.list({ limit: 100 })).data.filter((c) => c.metadata.organisation_id === team.organisation.id);
    expect(customers).toHaveLength(1);
    const portal = await postJson(`/api/v1/o/${slug}/billing/portal`, {}, owner);
    expect(portal.status).toBe(200);
    expect((await portal.json()).url).toMatch(new RegExp(`^${STRIPE_BASE_URL}/portal/`));
    expect((await get(`/o/${slug}/billing`, owner)).status).toBe(200);

    for (const person of team.people.slice(1)) {
      const session = await signIn(person.email);
      expect((await get(`/api/v1/o/${slug}/billing`, session)).status, person.role).toBe(403);
      expect((await postJson(`/api/v1/o/${slug}/billing/checkout`, {}, session)).status, person.role).toBe(403);
      expect((await postJson(`/api/v1/o/${slug}/billing/portal`, {}, session)).status, person.role).toBe(403);
      expect((await get(`/o/${slug}/billing`, session)).status, person.role).toBe(403);
      expect((await postForm(`/o/${slug}/billing`, { intent: "checkout" }, session)).status, person.role).toBe(403);
      const nav = await (await get(`/o/${slug}/machines`, session)).text();
      expect(nav, person.role).not.toContain(`href="/o/${slug}/billing"`);
    }
    const stranger = await signIn(other.people[0]!.email);
    expect((await get(`/api/v1/o/${slug}/billing`, stranger)).status).toBe(404);
    expect((await postJson(`/api/v1/o/${slug}/billing/checkout`, {}, stranger)).status).toBe(404);
    expect((await postJson(`/api/v1/o/${slug}/billing/portal`, {}, stranger)).status).toBe(404);
    expect((await get(`/o/${slug}/billing`, stranger)).status).toBe(404);
    expect((await postForm(`/o/${slug}/billing`, { intent: "transfer", memberId: team.people[1]!.memberId }, stranger)).status).toBe(404);
    expect((await get(`/api/v1/o/${slug}/billing`)).status).toBe(401);
  }, 120_000);

  it("hands ownership to another member, the old owner becoming admin, with an audit entry", async () => {
    const team = await createTeam(db(), ["owner", "engineer"]);
    const [from, to] = team.people;
    const admin = await signIn(to!.email);
    expect((await postForm(`/o/${team.organisation.slug}/billing`, { intent: "transfer", memberId: to!.memberId }, admin)).status).toBe(403);
    const response = await postForm(`/o/${team.organisation.slug}/billing`, { intent: "transfer", memberId: to!.memberId }, await signIn(from!.email));
    expect(response.status).toBe(302);
    const roles = await db().select({ id: member.id, role: member.role }).from(member).where(eq(member.organizationId, team.organisation.id));
    expect(Object.fromEntries(roles.map((r) => [r.id, r.role]))).toEqual({ [from!.memberId]: "admin", [to!.memberId]: "owner" });
    const audit = await db().select().from(auditEvent).where(and(eq(auditEvent.organisationId, team.organisation.id), eq(auditEvent.action, "organisation.ownership_transferred")));
    expect(audit).toHaveLength(1);
    expect(audit[0]).toMatchObject({ actor: from!.id, targetId: to!.memberId });
    expect((await get(`/api/v1/o/${team.organisation.slug}/billing`, await signIn(from!.email))).status).toBe(403);
  }, 120_000);
});

describe("the local Stripe restarted", () => {
  it("loses nothing: objects, and webhooks not yet delivered reach the app after the restart", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "stripe-restart-"));
    try {
      const team = await createTeam(db(), ["owner"]);
      await ensureBillingAccount(db(), { organisationId: team.organisation.id });
      const port = await freePort();
      // First run: the app is not reachable from it (nothing listens on the webhook address).
      const unreachable = `http://127.0.0.1:${await freePort()}/api/webhooks/stripe`;
      let fake = createStripeFake({ dataDir: dir, webhookUrl: unreachable, webhookSecret: WEBHOOK_SECRET, retryBaseMs: 60_000 });
      const own = stripeAt(await fake.listen(port));
      const { customer } = await customerOnClock(own, "pm_card_visa", { metadata: { organisation_id: team.organisation.id } });
      const subscription = await own.subscriptions.create({ customer: customer.id, items: [{ price: (await machinePrice(own)).id, quantity: 3 }], metadata: { organisation_id: team.organisation.id } });
      expect(fake.pendingDeliveries()).toBeGreaterThan(0);
      await fake.close();

      fake = createStripeFake({ dataDir: dir, webhookUrl: `${APP_URL}/api/webhooks/stripe`, webhookSecret: WEBHOOK_SECRET, retryBaseMs: 200 });
      await fake.listen(port);
      try {
        expect(await own.subscriptions.retrieve(subscription.id)).toEqual(subscription);
        expect((await own.invoices.list({ customer: customer.id })).data.map((i) => i.status)).toEqual(["paid"]);
        const row = await eventually("the app learnt the subscription", async () => {
          const [found] = await db().select().from(billingAccount).where(eq(billingAccount.organisationId, team.organisation.id));
          return found?.status === "active" ? found : null;
        });
        expect(row).toMatchObject({ plan: "per_machine", stripeSubscriptionId: subscription.id, stripeCustomerId: customer.id, machinesBilled: 3 });
        await eventually("all delivered", async () => fake.pendingDeliveries() === 0);
      } finally {
        await fake.close();
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 120_000);
});

describe("the demo seed", () => {
  it("leaves both demo organisations on an active subscription with months of paid invoices, and a second run duplicates nothing", async () => {
    for (const [slug, email] of [["corvid", "owner@corvid.example"], ["pellworth", "owner@pellworth.example"]] as const) {
      const summary = await billing(slug, await signIn(email));
      expect(summary).toMatchObject({ plan: "per_machine", status: "active" });
      expect(summary.invoices.filter((i) => i.status === "paid").length).toBeGreaterThanOrEqual(4);
      expect(summary.machinesBilled).toBeGreaterThan(0);
    }
    const [corvid] = await db().select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, "corvid"));
    const customersOf = async () => (await stripe.customers.list({ limit: 100 })).data.filter((c) => c.metadata.organisation_id === corvid!.id);
    const before = await customersOf();
    expect(before).toHaveLength(1);
    const subscriptionsBefore = await stripe.subscriptions.list({ customer: before[0]!.id, status: "all" });
    expect(await seedDemoBilling(db(), getStripe(), ["corvid", "pellworth"])).toEqual(["corvid", "pellworth"]);
    expect((await customersOf()).map((c) => c.id)).toEqual(before.map((c) => c.id));
    expect((await stripe.subscriptions.list({ customer: before[0]!.id, status: "all" })).data.map((s) => s.id)).toEqual(subscriptionsBefore.data.map((s) => s.id));
  }, 120_000);
});
