// What the fake's API does, on its state: customers, products and prices, test clocks,
// subscriptions with a quantity, invoices (one per period), proration, checkout and portal
// sessions, and the events each change raises. HTTP, keys and idempotency live in server.ts.
import { newId, type State, type StripeObject } from "./state";

export const API_VERSION = "2026-10-28.endive";
export const SEEDED_LOOKUP_KEY = "flyball_per_machine_monthly";

export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly type: string,
    message: string,
    readonly code?: string,
    readonly param?: string,
    readonly extra: Record<string, string> = {},
  ) {
    super(message);
  }
}

export type Params = Record<string, unknown>;

/** How a test card behaves when charged: Stripe's documented test numbers. */
export type CardBehaviour = "succeeds" | "declines" | "authenticates";
export const TEST_CARDS: Record<string, { behaviour: CardBehaviour; brand: string }> = {
  "4242424242424242": { behaviour: "succeeds", brand: "visa" },
  "4000000000000002": { behaviour: "declines", brand: "visa" },
  "4000002500003155": { behaviour: "authenticates", brand: "visa" },
};
// Stripe's test payment-method tokens for the same three cards, for `paymentMethods.attach`.
const TEST_TOKENS: Record<string, string> = {
  pm_card_visa: "4242424242424242",
  pm_card_chargeDeclined: "4000000000000002",
  pm_card_authenticationRequiredSetupForOffSession: "4000002500003155",
};

const missing = (kind: string, id: string, param = "id") =>
  new ApiError(404, "invalid_request_error", `No such ${kind}: '${id}'`, "resource_missing", param);

export function requireParam(params: Params, name: string): unknown {
  const value = params[name];
  if (value === undefined || value === "") {
    throw new ApiError(400, "invalid_request_error", `Missing required param: ${name}.`, "parameter_missing", name);
  }
  return value;
}

function asInt(value: unknown, param: string): number {
  const n = Number(value);
  if (!Number.isInteger(n)) throw new ApiError(400, "invalid_request_error", `Invalid integer: ${String(value)}`, "parameter_invalid_integer", param);
  return n;
}

function asBool(value: unknown): boolean {
  return value === true || value === "true";
}

function asMetadata(value: unknown, previous: Record<string, string> = {}): Record<string, string> {
  if (value === "") return {};
  if (!value || typeof value !== "object") return previous;
  const next = { ...previous };
  for (const [k, v] of Object.entries(value as Record<string, unknown>)) {
    if (v === "") delete next[k];
    else next[k] = String(v);
  }
  return next;
}

/** One calendar month (or `count`) after `from`, on the same day where the month has it. */
export function addMonths(from: number, count: number): number {
  const d = new Date(from * 1000);
  const day = d.getUTCDate();
  const target = new Date(Date.UTC(d.getUTCFullYear(), d.getUTCMonth() + count, 1, d.getUTCHours(), d.getUTCMinutes(), d.getUTCSeconds()));
  const lastDay = new Date(Date.UTC(target.getUTCFullYear(), target.getUTCMonth() + 1, 0)).getUTCDate();
  target.setUTCDate(Math.min(day, lastDay));
  return Math.floor(target.getTime() / 1000);
}

export function formatMoney(cents: number, currency: string): string {
  return new Intl.NumberFormat("en-GB", { style: "currency", currency: currency.toUpperCase() }).format(cents / 100);
}

function formatDay(t: number): string {
  return new Date(t * 1000).toLocaleDateString("en-GB", { day: "2-digit", month: "short", year: "numeric", timeZone: "UTC" });
}

/**
 * Days after a renewal invoice is finalized on which a failed charge is tried again (Stripe's
 * own schedule is configurable and "smart"; this is a fixed one). After the last, the
 * subscription is marked unpaid; its invoices stay open until paid.
 */
export const RETRY_DAYS = [3, 5, 7];

export type BillingHooks = {
  emit(type: string, object: StripeObject, previous?: Record<string, unknown>): void;
  publicUrl(): string;
  wallClock(): number;
};

export function createBilling(state: State, hooks: BillingHooks) {
  const { objects } = state;

  function store(object: StripeObject): StripeObject {
    if (!(object.id in state.order)) state.order[object.id] = ++state.seq;
    objects[object.id] = object;
    return object;
  }

  function get(kind: string, id: unknown, param = "id"): StripeObject {
    const found = typeof id === "string" ? objects[id] : undefined;
    if (!found || found.object !== kind || found.deleted) throw missing(kind.replace(/^test_helpers\./, "").replace(/_/g, " "), String(id), param);
    return found;
  }

  function snapshot<T>(value: T): T {
    return structuredClone(value);
  }

  /** Fields of `after` whose values differ from `before`, with their old values (an event's `previous_attributes`). */
  function changed(before: StripeObject, after: StripeObject): Record<string, unknown> {
    const previous: Record<string, unknown> = {};
    for (const key of Object.keys(after)) {
      if (JSON.stringify(before[key]) !== JSON.stringify(after[key])) previous[key] = before[key] ?? null;
    }
    return previous;
  }

  function clockOf(customerId: unknown): StripeObject | null {
    const customer = typeof customerId === "string" ? objects[customerId] : undefined;
    return customer?.test_clock ? (objects[customer.test_clock] ?? null) : null;
  }

  /** "Now" for a customer: its test clock's frozen time, or the wall clock. */
  function nowFor(customerId: unknown): number {
    return clockOf(customerId)?.frozen_time ?? hooks.wallClock();
  }

  // ---------------------------------------------------------------- seed

  function seed() {
    if (Object.values(objects).some((o) => o.object === "price" && o.lookup_key === SEEDED_LOOKUP_KEY)) return;
    const now = hooks.wallClock();
    const product = createProduct({ name: "Flyball per machine", description: "Monitoring and tuning of one machine's loops, per month." }, now);
    createPrice({ product: product.id, currency: "eur", unit_amount: 2900, recurring: { interval: "month" }, lookup_key: SEEDED_LOOKUP_KEY, nickname: "Per machine, monthly" }, now);
  }

  // ---------------------------------------------------------------- customers

  function createCustomer(params: Params): StripeObject {
    if (params.test_clock !== undefined) get("test_helpers.test_clock", params.test_clock, "test_clock");
    const now = params.test_clock ? objects[String(params.test_clock)]!.frozen_time : hooks.wallClock();
    const customer = store({
      id: newId("cus", 14),
      object: "customer",
      address: null,
      balance: 0,
      created: now,
      currency: null,
      default_source: null,
      delinquent: false,
      description: (params.description as string) ?? null,
      discount: null,
      email: (params.email as string) ?? null,
      invoice_prefix: newId("x", 8).slice(2).toUpperCase(),
      invoice_settings: { custom_fields: null, default_payment_method: null, footer: null, rendering_options: null },
      livemode: false,
      metadata: asMetadata(params.metadata),
      name: (params.name as string) ?? null,
      next_invoice_sequence: 1,
      phone: (params.phone as string) ?? null,
      preferred_locales: [],
      shipping: null,
      tax_exempt: "none",
      test_clock: (params.test_clock as string) ?? null,
    });
    if (params.payment_method) attachPaymentMethod(String(params.payment_method), { customer: customer.id });
    const defaultPm = (params.invoice_settings as Params | undefined)?.default_payment_method;
    if (defaultPm) customer.invoice_settings.default_payment_method = requireAttached(String(defaultPm), customer.id);
    hooks.emit("customer.created", customer);
    return customer;
  }

  function updateCustomer(id: string, params: Params): StripeObject {
    const customer = get("customer", id);
    const before = snapshot(customer);
    for (const field of ["email", "name", "description", "phone"]) {
      if (params[field] !== undefined) customer[field] = params[field] === "" ? null : params[field];
    }
    if (params.metadata !== undefined) customer.metadata = asMetadata(params.metadata, customer.metadata);
    const defaultPm = (params.invoice_settings as Params | undefined)?.default_payment_method;
    if (defaultPm !== undefined) customer.invoice_settings.default_payment_method = defaultPm === "" ? null : requireAttached(String(defaultPm), id);
    const previous = changed(before, customer);
    if (Object.keys(previous).length) hooks.emit("customer.updated", customer, previous);
    return customer;
  }

  function deleteCustomer(id: string): StripeObject {
    const customer = get("customer", id);
    for (const sub of Object.values(objects)) {
      if (sub.object === "subscription" && sub.customer === id && sub.status !== "canceled") cancelSubscription(sub.id);
    }
    customer.deleted = true;
    hooks.emit("customer.deleted", customer);
    return { id, object: "customer", deleted: true };
  }

  // ---------------------------------------------------------------- payment methods

  function requireAttached(pmId: string, customerId: string): string {
    const pm = get("payment_method", pmId, "invoice_settings[default_payment_method]");
    if (pm.customer !== customerId) {
      throw new ApiError(400, "invalid_request_error", `The payment method ${pmId} is not attached to customer ${customerId}.`, "resource_missing", "invoice_settings[default_payment_method]");
    }
    return pmId;
  }

  function createCard(number: string, customerId: string | null, expMonth = 12, expYear = 2034, name: string | null = null): StripeObject {
    const card = TEST_CARDS[number];
    if (!card) throw new ApiError(402, "card_error", "Your card number is not a test card this service knows.", "card_declined", "number", { decline_code: "generic_decline" });
    return store({
      id: newId("pm", 24),
      object: "payment_method",
      allow_redisplay: "unspecified",
      billing_details: { address: null, email: null, name, phone: null, tax_id: null },
      card: {
        brand: card.brand,
        checks: { address_line1_check: null, address_postal_code_check: null, cvc_check: "pass" },
        country: "US",
        display_brand: card.brand,
        exp_month: expMonth,
        exp_year: expYear,
        fingerprint: number.slice(-8),
        funding: "credit",
        generated_from: null,
        last4: number.slice(-4),
        networks: { available: [card.brand], preferred: null },
        regulated_status: "unregulated",
        three_d_secure_usage: { supported: true },
        wallet: null,
      },
      created: customerId ? nowFor(customerId) : hooks.wallClock(),
      customer: customerId,
      customer_account: null,
      livemode: false,
      metadata: {},
      type: "card",
    });
  }

  /** The test number behind a stored card (the fake keeps it in `fingerprint`'s place). */
  function behaviourOf(pmId: string | null): CardBehaviour | null {
    const pm = pmId ? objects[pmId] : undefined;
    if (!pm?.card) return null;
    const number = Object.keys(TEST_CARDS).find((n) => n.slice(-8) === pm.card.fingerprint);
    return number ? TEST_CARDS[number]!.behaviour : null;
  }

  function attachPaymentMethod(id: string, params: Params): StripeObject {
    const customerId = String(requireParam(params, "customer"));
    get("customer", customerId, "customer");
    const number = TEST_TOKENS[id];
    if (number) return createCard(number, customerId);
    const pm = get("payment_method", id);
    pm.customer = customerId;
    hooks.emit("payment_method.attached", pm);
    return pm;
  }

  // ---------------------------------------------------------------- products and prices

  function createProduct(params: Params, now = hooks.wallClock()): StripeObject {
    return store({
      id: (params.id as string) ?? newId("prod", 14),
      object: "product",
      active: params.active === undefined ? true : asBool(params.active),
      created: now,
      default_price: null,
      description: (params.description as string) ?? null,
      images: [],
      livemode: false,
      marketing_features: [],
      metadata: asMetadata(params.metadata),
      name: String(requireParam(params, "name")),
      package_dimensions: null,
      shippable: null,
      statement_descriptor: null,
      tax_code: null,
      tax_details: null,
      type: "service",
      unit_label: (params.unit_label as string) ?? null,
      updated: now,
      url: null,
    });
  }

  function createPrice(params: Params, now = hooks.wallClock()): StripeObject {
    const product = get("product", requireParam(params, "product"), "product");
    const recurring = params.recurring as Params | undefined;
    if (params.lookup_key) {
      const taken = Object.values(objects).find((o) => o.object === "price" && o.lookup_key === params.lookup_key);
      if (taken && !asBool(params.transfer_lookup_key)) {
        throw new ApiError(400, "invalid_request_error", `A price (\`${taken.id}\`) already uses that lookup key.`, "lookup_key_already_exists", "lookup_key");
      }
      if (taken) taken.lookup_key = null;
    }
    const unitAmount = asInt(requireParam(params, "unit_amount"), "unit_amount");
    const price = store({
      id: newId("price", 24),
      object: "price",
      active: true,
      billing_scheme: "per_unit",
      created: now,
      currency: String(requireParam(params, "currency")).toLowerCase(),
      custom_unit_amount: null,
      livemode: false,
      lookup_key: (params.lookup_key as string) ?? null,
      metadata: asMetadata(params.metadata),
      nickname: (params.nickname as string) ?? null,
      product: product.id,
      recurring: recurring
        ? { interval: String(recurring.interval ?? "month"), interval_count: Number(recurring.interval_count ?? 1), meter: null, trial_period_days: null, usage_type: "licensed" }
        : null,
      tax_behavior: "unspecified",
      tiers_mode: null,
      transform_quantity: null,
      type: recurring ? "recurring" : "one_time",
      unit_amount: unitAmount,
      unit_amount_decimal: String(unitAmount),
    });
    if (!product.default_price) product.default_price = price.id;
    return price;
  }

  // ---------------------------------------------------------------- test clocks

  function createClock(params: Params): StripeObject {
    const frozen = asInt(requireParam(params, "frozen_time"), "frozen_time");
    return store({
      id: newId("clock", 24),
      object: "test_helpers.test_clock",
      created: hooks.wallClock(),
      deletes_after: hooks.wallClock() + 30 * 86400,
      frozen_time: frozen,
      livemode: false,
      name: (params.name as string) ?? null,
      status: "ready",
      status_details: {},
    });
  }

  /** Moves the clock forward and runs everything that falls due on its customers' subscriptions. */
  function advanceClock(id: string, params: Params): StripeObject {
    const clock = get("test_helpers.test_clock", id);
    const target = asInt(requireParam(params, "frozen_time"), "frozen_time");
    if (target <= clock.frozen_time) {
      throw new ApiError(400, "invalid_request_error", "The test clock can only move forward: frozen_time must be later than the current one.", "parameter_invalid_integer", "frozen_time");
    }
    const subs = Object.values(objects).filter((o) => o.object === "subscription" && o.test_clock === id && o.status !== "canceled");
    // Each period end and payment retry in order, across the clock's subscriptions, with the clock at that moment.
    for (let due = nextDue(subs, target); due; due = nextDue(subs, target)) {
      clock.frozen_time = due.at;
      due.run();
    }
    clock.frozen_time = target;
    hooks.emit("test_helpers.test_clock.ready", clock);
    return clock;
  }

  function deleteClock(id: string): StripeObject {
    const clock = get("test_helpers.test_clock", id);
    for (const o of Object.values(objects)) if (o.object === "customer" && o.test_clock === id) o.deleted = true;
    clock.deleted = true;
    return { id, object: "test_helpers.test_clock", deleted: true };
  }

  /** Runs renewals of subscriptions without a clock whose period ended on the wall clock. */
  function advanceWallClock() {
    const now = hooks.wallClock();
    const subs = Object.values(objects).filter((o) => o.object === "subscription" && !o.test_clock && o.status !== "canceled");
    let guard = 0;
    for (let due = nextDue(subs, now); due && guard++ < 1000; due = nextDue(subs, now)) due.run();
  }

  type Due = { at: number; run: () => void };

  /** The earliest period end or payment retry of these subscriptions at or before `until`. */
  function nextDue(subs: StripeObject[], until: number): Due | null {
    const dues: Due[] = [];
    for (const sub of subs) {
      if (sub.status !== "canceled" && sub.status !== "incomplete" && periodEnd(sub) <= until) dues.push({ at: periodEnd(sub), run: () => renewSubscription(sub) });
    }
    for (const invoice of Object.values(objects)) {
      if (invoice.object !== "invoice" || invoice.status !== "open" || !invoice.next_payment_attempt || invoice.next_payment_attempt > until) continue;
      const sub = objects[subscriptionOf(invoice) ?? ""];
      if (sub && subs.includes(sub) && sub.status !== "canceled") dues.push({ at: invoice.next_payment_attempt, run: () => retryInvoice(invoice, sub) });
    }
    return dues.sort((a, b) => a.at - b.at)[0] ?? null;
  }

  /** A scheduled retry of a failed renewal; after the last one fails, the subscription is unpaid. */
  function retryInvoice(invoice: StripeObject, sub: StripeObject) {
    const before = snapshot(sub);
    if (payInvoice(invoice, invoice.next_payment_attempt)) {
      if ((sub.status === "past_due" || sub.status === "unpaid") && !hasOpenInvoices(sub.id)) sub.status = "active";
    } else if (invoice.next_payment_attempt === null) {
      sub.status = "unpaid";
    }
    const previous = changed(before, sub);
    if (Object.keys(previous).length) hooks.emit("customer.subscription.updated", sub, previous);
  }

  // ---------------------------------------------------------------- subscriptions

  const periodEnd = (sub: StripeObject): number => sub.items.data[0].current_period_end;
  const periodStart = (sub: StripeObject): number => sub.items.data[0].current_period_start;

  function planOf(price: StripeObject) {
    return {
      id: price.id,
      object: "plan",
      active: price.active,
      amount: price.unit_amount,
      amount_decimal: price.unit_amount_decimal,
      billing_scheme: price.billing_scheme,
      created: price.created,
      currency: price.currency,
      interval: price.recurring.interval,
      interval_count: price.recurring.interval_count,
      livemode: false,
      metadata: price.metadata,
      meter: null,
      nickname: price.nickname,
      product: price.product,
      tiers_mode: null,
      transform_usage: null,
      trial_period_days: null,
      usage_type: "licensed",
    };
  }

  function nextPeriodEnd(anchor: number, after: number, price: StripeObject): number {
    const step = price.recurring.interval === "year" ? 12 * price.recurring.interval_count : price.recurring.interval_count;
    if (price.recurring.interval === "day" || price.recurring.interval === "week") {
      const seconds = (price.recurring.interval === "day" ? 86400 : 7 * 86400) * price.recurring.interval_count;
      return after + seconds;
    }
    for (let k = 1; ; k++) {
      const end = addMonths(anchor, k * step);
      if (end > after) return end;
    }
  }

  function createSubscription(params: Params): StripeObject {
    const customer = get("customer", requireParam(params, "customer"), "customer");
    const items = (params.items as Params[] | undefined) ?? [];
    if (!Array.isArray(items) || items.length === 0) throw new ApiError(400, "invalid_request_error", "Missing required param: items.", "parameter_missing", "items");
    if (items.length > 1) throw new ApiError(400, "invalid_request_error", "This service's subscriptions carry one price each.", "parameter_invalid", "items");
    const price = get("price", items[0]!.price, "items[0][price]");
    if (!price.recurring) throw new ApiError(400, "invalid_request_error", "The price specified is not recurring; subscriptions need a recurring price.", "parameter_invalid", "items[0][price]");
    const quantity = items[0]!.quantity === undefined ? 1 : asInt(items[0]!.quantity, "items[0][quantity]");
    const defaultPm = params.default_payment_method ? requireAttached(String(params.default_payment_method), customer.id) : null;
    const now = nowFor(customer.id);
    const trialDays = params.trial_period_days === undefined ? 0 : asInt(params.trial_period_days, "trial_period_days");
    const trialEnd = params.trial_end !== undefined && params.trial_end !== "now" ? asInt(params.trial_end, "trial_end") : trialDays ? now + trialDays * 86400 : null;
    const behaviour = String(params.payment_behavior ?? "allow_incomplete");
    if (!trialEnd && behaviour === "error_if_incomplete") {
      // Stripe creates nothing when it refuses a subscription whose first payment fails.
      const failure = chargeFailure(customer.id, { default_payment_method: defaultPm });
      if (failure) throw failureError(failure);
    }
    const id = newId("sub", 24);
    const end = trialEnd ?? nextPeriodEnd(now, now, price);
    const item = {
      id: newId("si", 14),
      object: "subscription_item",
      billing_thresholds: null,
      created: now,
      current_period_end: end,
      current_period_start: now,
      current_trial: null,
      discounts: [],
      metadata: {},
      plan: planOf(price),
      price: snapshot(price),
      quantity,
      subscription: id,
      tax_rates: [],
    };
    const sub = store({
      id,
      object: "subscription",
      application: null,
      application_fee_percent: null,
      automatic_tax: { disabled_reason: null, enabled: false, liability: null },
      billing_cycle_anchor: end,
      billing_cycle_anchor_config: null,
      billing_mode: { flexible: null, type: "classic" },
      billing_schedules: [],
      billing_thresholds: null,
      cancel_at: null,
      cancel_at_period_end: false,
      canceled_at: null,
      cancellation_details: { comment: null, feedback: null, feedback_option: null, reason: null },
      collection_method: "charge_automatically",
      created: now,
      currency: price.currency,
      customer: customer.id,
      customer_account: null,
      days_until_due: null,
      default_payment_method: defaultPm,
      default_source: null,
      description: (params.description as string) ?? null,
      discounts: [],
      ended_at: null,
      invoice_settings: { account_tax_ids: null, custom_fields: null, description: null, footer: null, issuer: { type: "self" } },
      items: { object: "list", data: [item], has_more: false, url: `/v1/subscription_items?subscription=${id}` },
      latest_invoice: null,
      livemode: false,
      managed_payments: null,
      metadata: asMetadata(params.metadata),
      next_pending_invoice_item_invoice: null,
      on_behalf_of: null,
      pause_collection: null,
      payment_settings: { payment_method_options: null, payment_method_types: null, save_default_payment_method: "off" },
      pending_invoice_item_interval: null,
      pending_setup_intent: null,
      pending_update: null,
      schedule: null,
      start_date: now,
      status: trialEnd ? "trialing" : "incomplete",
      test_clock: customer.test_clock,
      transfer_data: null,
      trial_end: trialEnd,
      trial_settings: { end_behavior: { billing_cycle_anchor: null, missing_payment_method: "create_invoice" } },
      trial_start: trialEnd ? now : null,
    });
    if (!trialEnd) {
      // Without a billing-cycle anchor, the first period starts now: its anchor is the start.
      sub.billing_cycle_anchor = now;
    }
    const invoice = createInvoice(sub, "subscription_create", now, now, [subscriptionLine(sub, now, end, trialEnd !== null)]);
    sub.latest_invoice = invoice.id;
    if (trialEnd) payInvoice(invoice, now);
    else if (behaviour !== "default_incomplete") sub.status = payInvoice(invoice, now) ? "active" : "incomplete";
    hooks.emit("customer.subscription.created", sub);
    return sub;
  }

  function cardError(invoice: StripeObject): ApiError {
    return failureError(invoice._last_payment_error ?? { code: "card_declined", message: "Your card was declined.", decline_code: "generic_decline" });
  }

  function failureError(reason: ChargeFailure): ApiError {
    return new ApiError(402, "card_error", reason.message, reason.code, undefined, reason.decline_code ? { decline_code: reason.decline_code } : {});
  }

  function updateSubscription(id: string, params: Params): StripeObject {
    const sub = get("subscription", id);
    if (sub.status === "canceled") {
      throw new ApiError(400, "invalid_request_error", "A canceled subscription can only update its cancellation_details and metadata.", undefined, undefined);
    }
    const before = snapshot(sub);
    const now = nowFor(sub.customer);
    const item = sub.items.data[0];
    let quantity: number | undefined;
    if (params.quantity !== undefined) quantity = asInt(params.quantity, "quantity");
    const items = params.items as Params[] | undefined;
    if (Array.isArray(items)) {
      for (const [i, change] of items.entries()) {
        if (change.id !== undefined && change.id !== item.id) throw missing("subscription item", String(change.id), `items[${i}][id]`);
        if (change.price !== undefined && change.price !== item.price.id) {
          throw new ApiError(400, "invalid_request_error", "This service's subscriptions keep their price; change the quantity.", "parameter_invalid", `items[${i}][price]`);
        }
        if (change.quantity !== undefined) quantity = asInt(change.quantity, `items[${i}][quantity]`);
      }
    }
    if (quantity !== undefined && quantity !== item.quantity) {
      changeQuantity(sub, quantity, String(params.proration_behavior ?? "create_prorations"), now);
    }
    if (params.cancel_at_period_end !== undefined) {
      sub.cancel_at_period_end = asBool(params.cancel_at_period_end);
      sub.cancel_at = sub.cancel_at_period_end ? periodEnd(sub) : null;
      sub.canceled_at = sub.cancel_at_period_end ? now : null;
      sub.cancellation_details.reason = sub.cancel_at_period_end ? "cancellation_requested" : null;
    }
    if (params.metadata !== undefined) sub.metadata = asMetadata(params.metadata, sub.metadata);
    if (params.default_payment_method !== undefined) {
      sub.default_payment_method = params.default_payment_method === "" ? null : requireAttached(String(params.default_payment_method), sub.customer);
    }
    const previous = changed(before, sub);
    if (Object.keys(previous).length) hooks.emit("customer.subscription.updated", sub, previous);
    return sub;
  }

  function changeQuantity(sub: StripeObject, quantity: number, prorationBehavior: string, now: number) {
    const item = sub.items.data[0];
    const old = item.quantity as number;
    item.quantity = quantity;
    const start = periodStart(sub);
    const end = periodEnd(sub);
    if (prorationBehavior === "none" || sub.status === "trialing" || now >= end) return;
    const share = (end - now) / (end - start);
    const unit = item.price.unit_amount as number;
    const name = (objects[item.price.product]?.name as string) ?? "the plan";
    const after = formatDay(now);
    const credit = createInvoiceItem(sub, -Math.round(old * unit * share), `Unused time on ${old} × ${name} after ${after}`, old, now, end);
    const charge = createInvoiceItem(sub, Math.round(quantity * unit * share), `Remaining time on ${quantity} × ${name} after ${after}`, quantity, now, end);
    if (prorationBehavior === "always_invoice") {
      const invoice = createInvoice(sub, "subscription_update", now, now, [credit, charge].map((ii) => invoiceItemLine(ii)));
      for (const ii of [credit, charge]) ii.invoice = invoice.id;
      sub.latest_invoice = invoice.id;
      payInvoice(invoice, now);
    }
  }

  function createInvoiceItem(sub: StripeObject, amount: number, description: string, quantity: number, from: number, to: number): StripeObject {
    const item = sub.items.data[0];
    return store({
      id: newId("ii", 24),
      object: "invoiceitem",
      amount,
      currency: sub.currency,
      customer: sub.customer,
      customer_account: null,
      date: from,
      description,
      discountable: false,
      discounts: [],
      invoice: null,
      livemode: false,
      metadata: {},
      net_amount: amount,
      parent: { subscription_details: { subscription: sub.id, subscription_item: item.id }, type: "subscription_details" },
      period: { end: to, start: from },
      pricing: { price_details: { price: item.price.id, product: item.price.product }, type: "price_details", unit_amount_decimal: String(Math.round(amount / quantity)) },
      proration: true,
      quantity,
      tax_rates: [],
      test_clock: sub.test_clock,
    });
  }

  /** Ends the subscription now (Stripe's `invoice_now` and `prorate` options are accepted and not acted on). */
  function cancelSubscription(id: string): StripeObject {
    const sub = get("subscription", id);
    if (sub.status === "canceled") {
      throw new ApiError(400, "invalid_request_error", `This subscription has already been canceled: ${id}.`, "resource_missing", "subscription");
    }
    const now = nowFor(sub.customer);
    endSubscription(sub, now, "cancellation_requested");
    return sub;
  }

  function endSubscription(sub: StripeObject, at: number, reason: string) {
    sub.status = "canceled";
    sub.canceled_at = sub.canceled_at ?? at;
    sub.ended_at = at;
    sub.cancel_at_period_end = false;
    sub.cancellation_details.reason = reason;
    hooks.emit("customer.subscription.deleted", sub);
  }

  /** The period ended: start the next one and bill it (or end the subscription if it was to end). */
  function renewSubscription(sub: StripeObject) {
    const before = snapshot(sub);
    const item = sub.items.data[0];
    const oldStart = item.current_period_start as number;
    const oldEnd = item.current_period_end as number;
    if (sub.cancel_at_period_end) {
      endSubscription(sub, oldEnd, "cancellation_requested");
      return;
    }
    const newEnd = nextPeriodEnd(sub.billing_cycle_anchor, oldEnd, item.price);
    item.current_period_start = oldEnd;
    item.current_period_end = newEnd;
    if (sub.status === "trialing") sub.status = "active";
    const pending = Object.values(objects).filter((o) => o.object === "invoiceitem" && o.invoice === null && o.parent?.subscription_details?.subscription === sub.id);
    const lines = [...pending.map((ii) => invoiceItemLine(ii)), subscriptionLine(sub, oldEnd, newEnd, false)];
    const invoice = createInvoice(sub, "subscription_cycle", oldStart, oldEnd, lines, oldEnd);
    for (const ii of pending) ii.invoice = invoice.id;
    sub.latest_invoice = invoice.id;
    const paid = payInvoice(invoice, oldEnd);
    if (!paid) sub.status = sub.status === "unpaid" ? "unpaid" : "past_due";
    else if ((sub.status === "past_due" || sub.status === "unpaid") && !hasOpenInvoices(sub.id)) sub.status = "active";
    hooks.emit("customer.subscription.updated", sub, changed(before, sub));
  }

  function hasOpenInvoices(subId: string): boolean {
    return Object.values(objects).some((o) => o.object === "invoice" && o.status === "open" && subscriptionOf(o) === subId);
  }

  // ---------------------------------------------------------------- invoices

  const subscriptionOf = (invoice: StripeObject): string | null => invoice.parent?.subscription_details?.subscription ?? null;

  type Line = { amount: number; description: string; quantity: number; period: { start: number; end: number }; proration: boolean; invoiceItem: string | null; price: StripeObject; sub: StripeObject };

  function subscriptionLine(sub: StripeObject, start: number, end: number, trial: boolean): Line {
    const item = sub.items.data[0];
    const name = (objects[item.price.product]?.name as string) ?? "plan";
    const amount = trial ? 0 : item.quantity * item.price.unit_amount;
    const description = trial
      ? `Trial period for ${name}`
      : `${item.quantity} × ${name} (at ${formatMoney(item.price.unit_amount, item.price.currency)} / ${item.price.recurring.interval})`;
    return { amount, description, quantity: item.quantity, period: { start, end }, proration: false, invoiceItem: null, price: item.price, sub };
  }

  function invoiceItemLine(ii: StripeObject): Line {
    const sub = objects[ii.parent.subscription_details.subscription]!;
    return { amount: ii.amount, description: ii.description, quantity: ii.quantity, period: ii.period, proration: true, invoiceItem: ii.id, price: sub.items.data[0].price, sub };
  }

  function invoiceBody(sub: StripeObject, reason: string, periodStartAt: number, periodEndAt: number, lines: Line[], created: number, id: string) {
    const customer = objects[sub.customer]!;
    const total = lines.reduce((sum, l) => sum + l.amount, 0);
    const item = sub.items.data[0];
    return {
      id,
      object: "invoice",
      account_country: "DE",
      account_name: "Flyball",
      account_tax_ids: null,
      amount_due: Math.max(0, total),
      amount_overpaid: 0,
      amount_paid: 0,
      amount_remaining: Math.max(0, total),
      amount_shipping: 0,
      application: null,
      attempt_count: 0,
      attempted: false,
      auto_advance: true,
      automatic_tax: { disabled_reason: null, enabled: false, liability: null, provider: null, status: null },
      automatically_finalizes_at: null,
      billing_reason: reason,
      collection_method: "charge_automatically",
      created,
      currency: sub.currency,
      custom_fields: null,
      customer: customer.id,
      customer_account: null,
      customer_address: null,
      customer_email: customer.email,
      customer_name: customer.name,
      customer_phone: null,
      customer_shipping: null,
      customer_tax_exempt: "none",
      customer_tax_ids: [],
      default_payment_method: null,
      default_source: null,
      default_tax_rates: [],
      description: null,
      discounts: [],
      due_date: null,
      effective_at: null,
      ending_balance: null,
      footer: null,
      from_invoice: null,
      hosted_invoice_url: null,
      invoice_pdf: null,
      issuer: { type: "self" },
      last_finalization_error: null,
      latest_revision: null,
      lines: {
        object: "list",
        data: lines.map((l) => ({
          id: newId("il", 24),
          object: "line_item",
          amount: l.amount,
          currency: sub.currency,
          description: l.description,
          discount_amounts: [],
          discountable: !l.proration,
          discounts: [],
          invoice: id,
          livemode: false,
          metadata: {},
          parent: {
            invoice_item_details: l.invoiceItem
              ? { invoice_item: l.invoiceItem, proration: true, proration_details: { credited_items: null }, subscription: sub.id }
              : null,
            subscription_item_details: l.invoiceItem
              ? null
              : { invoice_item: null, proration: false, proration_details: { credited_items: null }, subscription: sub.id, subscription_item: item.id },
            type: l.invoiceItem ? "invoice_item_details" : "subscription_item_details",
          },
          period: l.period,
          pretax_credit_amounts: [],
          pricing: { price_details: { price: l.price.id, product: l.price.product }, type: "price_details", unit_amount_decimal: String(l.price.unit_amount) },
          quantity: l.quantity,
          quantity_decimal: String(l.quantity),
          subscription: sub.id,
          subtotal: l.amount,
          taxes: [],
        })),
        has_more: false,
        url: `/v1/invoices/${id}/lines`,
      },
      livemode: false,
      metadata: {},
      next_payment_attempt: null,
      number: null as string | null,
      on_behalf_of: null,
      parent: { quote_details: null, subscription_details: { metadata: sub.metadata, subscription: sub.id }, type: "subscription_details" },
      payment_settings: { default_mandate: null, payment_method_options: null, payment_method_types: null },
      period_end: periodEndAt,
      period_start: periodStartAt,
      post_payment_credit_notes_amount: 0,
      pre_payment_credit_notes_amount: 0,
      receipt_number: null,
      rendering: null,
      shipping_cost: null,
      shipping_details: null,
      starting_balance: 0,
      statement_descriptor: null,
      status: "draft",
      status_transitions: { finalized_at: null, marked_uncollectible_at: null, paid_at: null, voided_at: null },
      subtotal: total,
      subtotal_excluding_tax: total,
      test_clock: sub.test_clock,
      total,
      total_discount_amounts: [],
      total_excluding_tax: total,
      total_pretax_credit_amounts: [],
      total_taxes: [],
      webhooks_delivered_at: null,
    };
  }

  /** A finalized invoice for the subscription (Stripe finalizes a cycle's invoice about an hour later; the fake at once). */
  function createInvoice(sub: StripeObject, reason: string, start: number, end: number, lines: Line[], created = nowFor(sub.customer)): StripeObject {
    const id = newId("in", 24);
    const invoice = store(invoiceBody(sub, reason, start, end, lines, created, id));
    hooks.emit("invoice.created", invoice);
    const customer = objects[sub.customer]!;
    invoice.number = `${customer.invoice_prefix}-${String(customer.next_invoice_sequence++).padStart(4, "0")}`;
    invoice.status = "open";
    invoice.status_transitions.finalized_at = created;
    invoice.effective_at = created;
    invoice.hosted_invoice_url = `${hooks.publicUrl()}/invoices/${id}`;
    hooks.emit("invoice.finalized", invoice);
    return invoice;
  }

  type ChargeFailure = { code: string; message: string; decline_code: string | null };

  /** Why charging this subscription's (or customer's) default card would fail, or null. */
  function chargeFailure(customerId: string, sub: { default_payment_method?: string | null; [field: string]: unknown } | undefined): ChargeFailure | null {
    const customer = objects[customerId]!;
    const pmId: string | null = sub?.default_payment_method ?? customer.invoice_settings.default_payment_method ?? null;
    const behaviour = behaviourOf(pmId);
    const pm = pmId ? objects[pmId] : undefined;
    if (behaviour === null) return { code: "payment_method_missing", message: "The customer has no payment method to charge.", decline_code: null };
    if (behaviour === "declines") return { code: "card_declined", message: "Your card was declined.", decline_code: "generic_decline" };
    if (behaviour === "authenticates" && !pm?._authenticated) {
      return { code: "authentication_required", message: "Your card was declined. This transaction requires authentication.", decline_code: "authentication_required" };
    }
    return null;
  }

  /** Charges the customer's card for an open invoice; true when it is paid. */
  function payInvoice(invoice: StripeObject, at: number): boolean {
    if (invoice.status !== "open") return invoice.status === "paid";
    const sub = objects[subscriptionOf(invoice) ?? ""];
    const customer = objects[invoice.customer]!;
    if (invoice.amount_due > 0) {
      const pmId: string | null = sub?.default_payment_method ?? customer.invoice_settings.default_payment_method ?? null;
      invoice.attempted = true;
      invoice.attempt_count += 1;
      const fails = chargeFailure(customer.id, sub);
      if (fails) {
        // A first invoice is not retried (the subscription stays incomplete); a renewal is, on a schedule.
        const retryDay = invoice.billing_reason === "subscription_create" ? undefined : RETRY_DAYS[invoice.attempt_count - 1];
        invoice.next_payment_attempt = retryDay === undefined ? null : invoice.status_transitions.finalized_at + retryDay * 86400;
        invoice._last_payment_error = fails;
        hooks.emit("invoice.payment_failed", invoice);
        return false;
      }
      invoice.default_payment_method = pmId;
    }
    invoice.status = "paid";
    invoice.amount_paid = invoice.amount_due;
    invoice.amount_remaining = 0;
    invoice.next_payment_attempt = null;
    invoice.status_transitions.paid_at = at;
    delete invoice._last_payment_error;
    hooks.emit("invoice.paid", invoice);
    hooks.emit("invoice.payment_succeeded", invoice);
    return true;
  }

  /** `POST /v1/invoices/:id/pay`, and what the portal does after a card change. */
  function payOpenInvoice(id: string): StripeObject {
    const invoice = get("invoice", id);
    if (invoice.status !== "open") {
      throw new ApiError(400, "invalid_request_error", "Invoice is already paid", "invoice_not_open", undefined);
    }
    const sub = objects[subscriptionOf(invoice) ?? ""];
    const before = sub ? snapshot(sub) : null;
    const at = nowFor(invoice.customer);
    if (!payInvoice(invoice, at)) throw cardError(invoice);
    if (sub && before && ["past_due", "unpaid", "incomplete"].includes(sub.status) && !hasOpenInvoices(sub.id)) {
      sub.status = "active";
      hooks.emit("customer.subscription.updated", sub, changed(before, sub));
    }
    return invoice;
  }

  /** The next invoice of a subscription as it stands (`invoices.createPreview`). */
  function previewInvoice(params: Params): StripeObject {
    const customerId = String(requireParam(params, "customer"));
    get("customer", customerId, "customer");
    const subId = params.subscription as string | undefined;
    const sub = subId
      ? get("subscription", subId, "subscription")
      : Object.values(objects).find((o) => o.object === "subscription" && o.customer === customerId && o.status !== "canceled");
    if (!sub || sub.status === "canceled") {
      throw new ApiError(404, "invalid_request_error", `No upcoming invoices for customer: ${customerId}`, "invoice_upcoming_none", undefined);
    }
    const start = periodEnd(sub);
    const end = nextPeriodEnd(sub.billing_cycle_anchor, start, sub.items.data[0].price);
    const pending = Object.values(objects).filter((o) => o.object === "invoiceitem" && o.invoice === null && o.parent?.subscription_details?.subscription === sub.id);
    const lines = [...pending.map((ii) => invoiceItemLine(ii)), subscriptionLine(sub, start, end, false)];
    const body = invoiceBody(sub, "upcoming", periodStart(sub), start, lines, nowFor(customerId), `upcoming_${sub.id}`);
    return { ...body, id: `upcoming_${sub.id}`, next_payment_attempt: start };
  }

  // ---------------------------------------------------------------- checkout and portal

  function createCheckoutSession(params: Params): StripeObject {
    const mode = String(requireParam(params, "mode"));
    if (mode !== "subscription") throw new ApiError(400, "invalid_request_error", "This service's checkout takes mode=subscription only.", "parameter_invalid", "mode");
    const lineItems = params.line_items as Params[] | undefined;
    if (!Array.isArray(lineItems) || lineItems.length !== 1) throw new ApiError(400, "invalid_request_error", "Missing required param: line_items.", "parameter_missing", "line_items");
    const price = get("price", lineItems[0]!.price, "line_items[0][price]");
    const quantity = lineItems[0]!.quantity === undefined ? 1 : asInt(lineItems[0]!.quantity, "line_items[0][quantity]");
    const customerId = params.customer ? get("customer", params.customer, "customer").id : null;
    const now = customerId ? nowFor(customerId) : hooks.wallClock();
    const successUrl = String(requireParam(params, "success_url"));
    const id = newId("cs_test", 58);
    const subscriptionData = (params.subscription_data as Params | undefined) ?? {};
    return store({
      id,
      object: "checkout.session",
      adaptive_pricing: null,
      after_expiration: null,
      allow_promotion_codes: null,
      allowed_payment_method_types: null,
      amount_subtotal: quantity * price.unit_amount,
      amount_total: quantity * price.unit_amount,
      automatic_tax: { enabled: false, liability: null, provider: null, status: null },
      billing_address_collection: null,
      cancel_url: (params.cancel_url as string) ?? null,
      client_reference_id: (params.client_reference_id as string) ?? null,
      client_secret: null,
      collected_information: null,
      consent: null,
      consent_collection: null,
      created: now,
      currency: price.currency,
      currency_conversion: null,
      custom_fields: [],
      custom_text: { after_submit: null, shipping_address: null, submit: null, terms_of_service_acceptance: null },
      customer: customerId,
      customer_account: null,
      customer_creation: customerId ? null : "always",
      customer_details: customerId ? { address: null, business_name: null, email: objects[customerId]!.email, individual_name: null, name: objects[customerId]!.name, phone: null, tax_exempt: "none", tax_ids: [] } : null,
      customer_email: (params.customer_email as string) ?? null,
      discounts: [],
      expires_at: now + 24 * 3600,
      integration_identifier: null,
      invoice: null,
      invoice_creation: null,
      livemode: false,
      locale: null,
      managed_payments: null,
      metadata: asMetadata(params.metadata),
      mode,
      origin_context: null,
      payment_intent: null,
      payment_link: null,
      payment_method_collection: "always",
      payment_method_configuration_details: null,
      payment_method_options: {},
      payment_method_types: ["card"],
      payment_status: "unpaid",
      permissions: null,
      recovered_from: null,
      saved_payment_method_options: null,
      setup_intent: null,
      shipping_address_collection: null,
      shipping_cost: null,
      shipping_options: [],
      status: "open",
      submit_type: null,
      subscription: null,
      success_url: successUrl,
      total_details: { amount_discount: 0, amount_shipping: 0, amount_tax: 0 },
      ui_mode: "hosted",
      wallet_options: null,
      url: `${hooks.publicUrl()}/pay/${id}`,
      // Kept for the card page (fields starting with "_" never leave the fake).
      _pending: { price: price.id, quantity, subscription_metadata: asMetadata(subscriptionData.metadata), trial_period_days: subscriptionData.trial_period_days ?? null },
    });
  }

  /** The card page's outcome: a subscription on a card that was charged, or an ApiError saying why not. */
  function completeCheckout(id: string, card: { number: string; expMonth: number; expYear: number; name: string | null; authenticated: boolean }): StripeObject {
    const session = get("checkout.session", id);
    if (session.status !== "open") throw new ApiError(400, "invalid_request_error", "This checkout session is no longer open.", "checkout_session_closed");
    const behaviour = TEST_CARDS[card.number]?.behaviour;
    if (!behaviour) throw new ApiError(402, "card_error", "That number is not one of the test cards this service accepts.", "incorrect_number");
    if (behaviour === "declines") throw new ApiError(402, "card_error", "Your card was declined.", "card_declined", undefined, { decline_code: "generic_decline" });
    if (behaviour === "authenticates" && !card.authenticated) throw new ApiError(402, "card_error", "Your bank asks you to confirm this payment.", "authentication_required");
    const customer = session.customer ? objects[session.customer]! : createCustomer({ email: session.customer_email ?? undefined, name: card.name ?? undefined });
    const pm = createCard(card.number, customer.id, card.expMonth, card.expYear, card.name);
    if (card.authenticated) pm._authenticated = true;
    hooks.emit("payment_method.attached", pm);
    updateCustomer(customer.id, { invoice_settings: { default_payment_method: pm.id } });
    const pending = session._pending;
    const sub = createSubscription({
      customer: customer.id,
      items: [{ price: pending.price, quantity: pending.quantity }],
      metadata: pending.subscription_metadata,
      ...(pending.trial_period_days ? { trial_period_days: pending.trial_period_days } : {}),
    });
    session.customer = customer.id;
    session.customer_details = { address: null, business_name: null, email: customer.email, individual_name: null, name: card.name ?? customer.name, phone: null, tax_exempt: "none", tax_ids: [] };
    session.subscription = sub.id;
    session.invoice = sub.latest_invoice;
    session.status = "complete";
    session.payment_status = sub.status === "trialing" ? "no_payment_required" : "paid";
    hooks.emit("checkout.session.completed", session);
    return session;
  }

  function createPortalSession(params: Params): StripeObject {
    const customer = get("customer", requireParam(params, "customer"), "customer");
    const id = newId("bps", 24);
    return store({
      id,
      object: "billing_portal.session",
      configuration: "bpc_flyball_default",
      created: nowFor(customer.id),
      customer: customer.id,
      customer_account: null,
      flow: null,
      livemode: false,
      locale: null,
      on_behalf_of: null,
      return_url: (params.return_url as string) ?? null,
      url: `${hooks.publicUrl()}/portal/${id}`,
    });
  }

  /** The portal's card change: the new card becomes the default, and open invoices are charged to it. */
  function replaceCard(customerId: string, card: { number: string; expMonth: number; expYear: number; name: string | null }) {
    const pm = createCard(card.number, customerId, card.expMonth, card.expYear, card.name);
    // Saving a card on the portal includes the bank's check (Stripe sets the card up for later
    // charges there), so a card that asks for confirmation is charged later without asking again.
    if (TEST_CARDS[card.number]?.behaviour === "authenticates") pm._authenticated = true;
    hooks.emit("payment_method.attached", pm);
    updateCustomer(customerId, { invoice_settings: { default_payment_method: pm.id } });
    for (const o of Object.values(objects)) {
      if (o.object === "subscription" && o.customer === customerId && o.default_payment_method) o.default_payment_method = null;
    }
    const open = Object.values(objects).filter((o) => o.object === "invoice" && o.customer === customerId && o.status === "open");
    const failures: string[] = [];
    for (const invoice of open) {
      try {
        payOpenInvoice(invoice.id);
      } catch (error) {
        failures.push(error instanceof Error ? error.message : String(error));
      }
    }
    return { pm, failures };
  }

  return {
    get,
    store,
    seed,
    nowFor,
    subscriptionOf,
    createCustomer,
    updateCustomer,
    deleteCustomer,
    attachPaymentMethod,
    createProduct,
    createPrice,
    createClock,
    advanceClock,
    deleteClock,
    advanceWallClock,
    createSubscription,
    updateSubscription,
    cancelSubscription,
    payOpenInvoice,
    previewInvoice,
    createCheckoutSession,
    completeCheckout,
    createPortalSession,
    replaceCard,
  };
}

export type Billing = ReturnType<typeof createBilling>;
