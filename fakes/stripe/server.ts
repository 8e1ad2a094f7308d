// A local stand-in for the Stripe API, driven by the real `stripe` SDK. It speaks Stripe's wire
// format (form bodies in bracket notation, `Bearer sk_test_…` keys, `{error: {…}}` answers,
// cursor lists, idempotency keys, `expand[]`), keeps its state in one JSON file, and sends
// signed webhooks with retries. Billing rules are in billing.ts; the hosted pages in pages.ts.
//
//   /v1/customers, /v1/products, /v1/prices, /v1/payment_methods/:id/attach,
//   /v1/subscriptions, /v1/subscription_items, /v1/invoices (+ /pay, /create_preview),
//   /v1/checkout/sessions, /v1/billing_portal/sessions, /v1/test_helpers/test_clocks (+ /advance),
//   /v1/events                                                          — the API
//   /  /pay/:session  /portal/:session  /invoices/:invoice               — pages for people
import { createHmac } from "node:crypto";
import { existsSync, readFileSync } from "node:fs";
import { createServer, type IncomingMessage, type Server, type ServerResponse } from "node:http";
import type { AddressInfo } from "node:net";
import path from "node:path";
import qs from "qs";
import { API_VERSION, ApiError, createBilling, type Params } from "./billing";
import { handlePage } from "./pages";
import knownParameters from "./known-parameters.json";
import { loadState, newId, saveState, type StripeObject } from "./state";

/** Top-level parameters of each endpoint, as the `stripe` SDK declares them (checked by shapes.test.ts). */
const KNOWN_PARAMETERS: Record<string, string[] | undefined> = knownParameters;

export type StripeFakeOptions = {
  dataDir: string;
  /** Where events are POSTed; none means events are only kept (and listed by /v1/events). */
  webhookUrl?: string | null;
  /** Signing secret; when absent it is read from `secretFile` at each delivery. */
  webhookSecret?: string | null;
  secretFile?: string;
  /** First retry delay; each failed attempt doubles it (capped at an hour). */
  retryBaseMs?: number;
  /** The address pages are reached at (defaults to http://127.0.0.1:<port>). */
  publicUrl?: string | null;
};

const MAX_BODY = 1024 * 1024;
const IDEMPOTENCY_TTL_SECONDS = 24 * 3600;
const RETRY_CAP_MS = 3600 * 1000;

type Route = { method: string; pattern: RegExp; params: string; run: (match: string[], params: Params) => StripeObject | Record<string, unknown> };

export function createStripeFake(options: StripeFakeOptions) {
  const state = loadState(options.dataDir);
  const retryBaseMs = options.retryBaseMs ?? 1000;
  let server: Server | null = null;
  let timer: NodeJS.Timeout | null = null;
  let delivering = false;
  let closed = false;
  /** The API request being answered: events it raises name it (those a test clock raises do not). */
  let currentRequest: { id: string; idempotency_key: string | null } | null = null;

  const wallClock = () => Math.floor(Date.now() / 1000);
  function publicUrl(): string {
    if (options.publicUrl) return options.publicUrl.replace(/\/$/, "");
    const address = server?.address() as AddressInfo | null;
    return `http://127.0.0.1:${address?.port ?? 3026}`;
  }

  const billing = createBilling(state, {
    wallClock,
    publicUrl,
    emit(type, object, previous) {
      const event = billing.store({
        id: newId("evt", 24),
        object: "event",
        api_version: API_VERSION,
        created: billing.nowFor(object.customer ?? (object.object === "customer" ? object.id : null)),
        data: { object: present(object), ...(previous && Object.keys(previous).length ? { previous_attributes: present(previous) } : {}) },
        livemode: false,
        pending_webhooks: options.webhookUrl ? 1 : 0,
        request: currentRequest ?? { id: null, idempotency_key: null },
        type,
      });
      if (options.webhookUrl) state.deliveries.push({ eventId: event.id, attempts: 0, nextAttemptAt: Date.now(), lastError: null });
    },
  });

  /** A copy for the outside: internal fields (named with a leading "_") removed. */
  function present<T>(value: T): T {
    return JSON.parse(JSON.stringify(value, (key, v) => (key.startsWith("_") ? undefined : v))) as T;
  }

  function persist() {
    saveState(options.dataDir, state);
  }

  // ---------------------------------------------------------------- lists and expansion

  function list(kind: string, url: string, params: Params, keep: (o: StripeObject) => boolean = () => true) {
    const limit = params.limit === undefined ? 10 : Number(params.limit);
    if (!Number.isInteger(limit) || limit < 1 || limit > 100) {
      throw new ApiError(400, "invalid_request_error", "Invalid limit: must be an integer between 1 and 100.", "parameter_invalid_integer", "limit");
    }
    // Newest first, as Stripe lists.
    const all = Object.values(state.objects)
      .filter((o) => o.object === kind && !o.deleted && keep(o))
      .sort((a, b) => (b.created - a.created) || (state.order[b.id]! - state.order[a.id]!));
    let start = 0;
    let end = all.length;
    if (params.starting_after) {
      const at = all.findIndex((o) => o.id === params.starting_after);
      if (at < 0) throw new ApiError(404, "invalid_request_error", `No such ${kind.replace(/_/g, " ")}: '${String(params.starting_after)}'`, "resource_missing", "starting_after");
      start = at + 1;
    } else if (params.ending_before) {
      const at = all.findIndex((o) => o.id === params.ending_before);
      if (at < 0) throw new ApiError(404, "invalid_request_error", `No such ${kind.replace(/_/g, " ")}: '${String(params.ending_before)}'`, "resource_missing", "ending_before");
      end = at;
      start = Math.max(0, end - limit);
    }
    const data = all.slice(start, Math.min(end, start + limit));
    const hasMore = params.ending_before ? start > 0 : start + data.length < end;
    return { object: "list", data, has_more: hasMore, url };
  }

  /** Replaces ids by objects along each `expand[]` path (`a.b`, or `data.a` in a list). */
  function expand(body: unknown, paths: string[]): unknown {
    const result = structuredClone(body) as Record<string, unknown>;
    for (const p of paths) {
      if (p.split(".").length > 4) throw new ApiError(400, "invalid_request_error", `You cannot expand more than 4 levels of a property. Property: ${p}`, "parameter_invalid", "expand");
      walk(result, p.split("."), p);
    }
    return result;
  }

  function walk(node: unknown, parts: string[], whole: string) {
    if (!node || typeof node !== "object" || parts.length === 0) return;
    const [head, ...rest] = parts as [string, ...string[]];
    const holder = node as Record<string, unknown>;
    if (Array.isArray(holder[head]) && head === "data") {
      for (const item of holder[head] as unknown[]) walk(item, rest, whole);
      return;
    }
    let value = holder[head];
    if (typeof value === "string") {
      const target = state.objects[value];
      if (!target) return;
      value = structuredClone(target);
      holder[head] = value;
    } else if (value === undefined) {
      throw new ApiError(400, "invalid_request_error", `This property cannot be expanded (${whole}).`, "parameter_invalid", "expand");
    }
    walk(value, rest, whole);
  }

  // ---------------------------------------------------------------- routes

  const id = "([A-Za-z0-9_]+)";
  const r = (method: string, pattern: string, params: string, run: Route["run"]): Route => ({ method, pattern: new RegExp(`^${pattern}$`), params, run });
  const eq = (value: unknown) => (field: unknown) => value === undefined || field === value;

  const routes: Route[] = [
    r("POST", "/v1/customers", "CustomerCreateParams", (_m, p) => billing.createCustomer(p)),
    r("GET", "/v1/customers", "CustomerListParams", (_m, p) => list("customer", "/v1/customers", p, (o) => eq(p.email)(o.email) && eq(p.test_clock)(o.test_clock))),
    r("GET", `/v1/customers/${id}`, "CustomerRetrieveParams", ([cid]) => {
      const found = state.objects[cid!];
      if (found?.object === "customer" && found.deleted) return { id: found.id, object: "customer", deleted: true };
      return billing.get("customer", cid);
    }),
    r("POST", `/v1/customers/${id}`, "CustomerUpdateParams", ([cid], p) => billing.updateCustomer(cid!, p)),
    r("DELETE", `/v1/customers/${id}`, "CustomerDeleteParams", ([cid]) => billing.deleteCustomer(cid!)),
    r("GET", `/v1/customers/${id}/payment_methods`, "CustomerListPaymentMethodsParams", ([cid], p) => {
      billing.get("customer", cid);
      return list("payment_method", `/v1/customers/${cid}/payment_methods`, p, (o) => o.customer === cid);
    }),

    r("POST", `/v1/payment_methods/${id}/attach`, "PaymentMethodAttachParams", ([pm], p) => billing.attachPaymentMethod(pm!, p)),
    r("GET", `/v1/payment_methods/${id}`, "PaymentMethodRetrieveParams", ([pm]) => billing.get("payment_method", pm)),
    r("GET", "/v1/payment_methods", "PaymentMethodListParams", (_m, p) => list("payment_method", "/v1/payment_methods", p, (o) => eq(p.customer)(o.customer))),

    r("POST", "/v1/products", "ProductCreateParams", (_m, p) => billing.createProduct(p)),
    r("GET", "/v1/products", "ProductListParams", (_m, p) => list("product", "/v1/products", p, (o) => p.active === undefined || String(o.active) === String(p.active))),
    r("GET", `/v1/products/${id}`, "ProductRetrieveParams", ([pid]) => billing.get("product", pid)),

    r("POST", "/v1/prices", "PriceCreateParams", (_m, p) => billing.createPrice(p)),
    r("GET", "/v1/prices", "PriceListParams", (_m, p) => {
      const keys = Array.isArray(p.lookup_keys) ? (p.lookup_keys as string[]) : p.lookup_keys ? [String(p.lookup_keys)] : null;
      return list("price", "/v1/prices", p, (o) =>
        (!keys || keys.includes(o.lookup_key)) && eq(p.product)(o.product) && eq(p.type)(o.type) && eq(p.currency)(o.currency) &&
        (p.active === undefined || String(o.active) === String(p.active)));
    }),
    r("GET", `/v1/prices/${id}`, "PriceRetrieveParams", ([pid]) => billing.get("price", pid)),

    r("POST", "/v1/test_helpers/test_clocks", "TestHelpers.TestClockCreateParams", (_m, p) => billing.createClock(p)),
    r("GET", "/v1/test_helpers/test_clocks", "TestHelpers.TestClockListParams", (_m, p) => list("test_helpers.test_clock", "/v1/test_helpers/test_clocks", p)),
    r("GET", `/v1/test_helpers/test_clocks/${id}`, "TestHelpers.TestClockRetrieveParams", ([cid]) => billing.get("test_helpers.test_clock", cid)),
    r("POST", `/v1/test_helpers/test_clocks/${id}/advance`, "TestHelpers.TestClockAdvanceParams", ([cid], p) => billing.advanceClock(cid!, p)),
    r("DELETE", `/v1/test_helpers/test_clocks/${id}`, "TestHelpers.TestClockDeleteParams", ([cid]) => billing.deleteClock(cid!)),

    r("POST", "/v1/subscriptions", "SubscriptionCreateParams", (_m, p) => billing.createSubscription(p)),
    r("GET", "/v1/subscriptions", "SubscriptionListParams", (_m, p) =>
      list("subscription", "/v1/subscriptions", p, (o) =>
        eq(p.customer)(o.customer) && eq(p.test_clock)(o.test_clock) && eq(p.price)(o.items.data[0].price.id) &&
        (p.status === "all" ? true : p.status ? o.status === p.status : o.status !== "canceled"))),
    r("GET", `/v1/subscriptions/${id}`, "SubscriptionRetrieveParams", ([sid]) => billing.get("subscription", sid)),
    r("POST", `/v1/subscriptions/${id}`, "SubscriptionUpdateParams", ([sid], p) => billing.updateSubscription(sid!, p)),
    r("DELETE", `/v1/subscriptions/${id}`, "SubscriptionCancelParams", ([sid]) => billing.cancelSubscription(sid!)),
    r("GET", `/v1/subscription_items/${id}`, "SubscriptionItemRetrieveParams", ([si]) => findItem(si!)),
    r("POST", `/v1/subscription_items/${id}`, "SubscriptionItemUpdateParams", ([si], p) => {
      const item = findItem(si!);
      billing.updateSubscription(item.subscription, { items: [{ id: si, quantity: p.quantity }], proration_behavior: p.proration_behavior });
      return findItem(si!);
    }),

    r("GET", "/v1/invoices", "InvoiceListParams", (_m, p) =>
      list("invoice", "/v1/invoices", p, (o) => eq(p.customer)(o.customer) && eq(p.subscription)(billing.subscriptionOf(o)) && eq(p.status)(o.status))),
    r("POST", "/v1/invoices/create_preview", "InvoiceCreatePreviewParams", (_m, p) => billing.previewInvoice(p)),
    r("GET", `/v1/invoices/${id}`, "InvoiceRetrieveParams", ([iid]) => billing.get("invoice", iid)),
    r("POST", `/v1/invoices/${id}/pay`, "InvoicePayParams", ([iid]) => billing.payOpenInvoice(iid!)),
    r("GET", "/v1/invoiceitems", "InvoiceItemListParams", (_m, p) =>
      list("invoiceitem", "/v1/invoiceitems", p, (o) => eq(p.customer)(o.customer) && (p.pending === undefined || (o.invoice === null) === (String(p.pending) === "true")))),

    r("POST", "/v1/checkout/sessions", "Checkout.SessionCreateParams", (_m, p) => billing.createCheckoutSession(p)),
    r("GET", "/v1/checkout/sessions", "Checkout.SessionListParams", (_m, p) =>
      list("checkout.session", "/v1/checkout/sessions", p, (o) => eq(p.customer)(o.customer) && eq(p.subscription)(o.subscription))),
    r("GET", `/v1/checkout/sessions/${id}`, "Checkout.SessionRetrieveParams", ([cs]) => billing.get("checkout.session", cs)),

    r("POST", "/v1/billing_portal/sessions", "BillingPortal.SessionCreateParams", (_m, p) => billing.createPortalSession(p)),

    r("GET", "/v1/events", "EventListParams", (_m, p) => list("event", "/v1/events", p, (o) => eq(p.type)(o.type))),
    r("GET", `/v1/events/${id}`, "EventRetrieveParams", ([eid]) => billing.get("event", eid)),
  ];

  function findItem(itemId: string): StripeObject {
    for (const o of Object.values(state.objects)) {
      if (o.object === "subscription" && o.items.data[0].id === itemId) return o.items.data[0];
    }
    throw new ApiError(404, "invalid_request_error", `No such subscription item: '${itemId}'`, "resource_missing", "id");
  }

  // ---------------------------------------------------------------- HTTP

  function send(res: ServerResponse, status: number, payload: string, headers: Record<string, string> = {}) {
    res.writeHead(status, {
      "content-type": "application/json",
      "content-length": String(Buffer.byteLength(payload)),
      "request-id": headers["request-id"] ?? newId("req", 14),
      "stripe-version": API_VERSION,
      ...headers,
    });
    res.end(payload);
  }

  function errorPayload(error: ApiError): string {
    return JSON.stringify({ error: { code: error.code, doc_url: error.code ? `https://docs.stripe.com/error-codes/${error.code.replace(/_/g, "-")}` : undefined, message: error.message, param: error.param, type: error.type, ...error.extra } }, null, 2);
  }

  function readBody(req: IncomingMessage): Promise<string> {
    return new Promise((resolve, reject) => {
      const chunks: Buffer[] = [];
      let size = 0;
      req.on("data", (chunk: Buffer) => {
        size += chunk.length;
        if (size > MAX_BODY) {
          reject(new ApiError(413, "invalid_request_error", "The request body is too large."));
          req.destroy();
        } else chunks.push(chunk);
      });
      req.on("end", () => resolve(Buffer.concat(chunks).toString("utf8")));
      req.on("error", reject);
    });
  }

  // Stripe's bracket notation: `items[0][price]=…&expand[]=…`; qs reads both indexed and empty brackets.
  const parseForm = (text: string): Params => qs.parse(text, { depth: 10, arrayLimit: 1000, parameterLimit: 10000 }) as Params;

  function authorise(req: IncomingMessage) {
    const header = req.headers.authorization ?? "";
    const key = header.startsWith("Bearer ") ? header.slice(7).trim() : "";
    if (!key) {
      throw new ApiError(401, "invalid_request_error", "You did not provide an API key. You need to provide your API key in the Authorization header, using Bearer auth (e.g. 'Authorization: Bearer YOUR_SECRET_KEY').");
    }
    if (!/^sk_test_[A-Za-z0-9_]+$/.test(key)) {
      const shown = key.length > 12 ? `${key.slice(0, 8)}${"*".repeat(Math.max(0, key.length - 12))}${key.slice(-4)}` : key.replace(/./g, "*");
      throw new ApiError(401, "invalid_request_error", `Invalid API Key provided: ${shown}. This service accepts test-mode secret keys only (sk_test_…).`);
    }
    return key;
  }

  async function handleApi(req: IncomingMessage, res: ServerResponse, url: URL) {
    const method = req.method ?? "GET";
    const key = authorise(req);
    const raw = await readBody(req);
    const params = { ...parseForm(url.search.slice(1)), ...parseForm(raw) };

    const idempotencyKey = method === "POST" ? (req.headers["idempotency-key"] as string | undefined) : undefined;
    const slot = idempotencyKey ? `${key}:${idempotencyKey}` : null;
    if (slot) {
      const seen = state.idempotency[slot];
      if (seen && seen.at > wallClock() - IDEMPOTENCY_TTL_SECONDS) {
        if (seen.method !== method || seen.path !== url.pathname || seen.body !== raw) {
          throw new ApiError(
            400,
            "idempotency_error",
            `Keys for idempotent requests can only be used with the same parameters they were first used with. Try using a key other than '${idempotencyKey}' if you meant to execute a different request.`,
          );
        }
        return send(res, seen.status, seen.response, { "idempotent-replayed": "true", "idempotency-key": idempotencyKey! });
      }
    }

    let status = 200;
    let payload: string;
    const before = state.seq;
    const requestId = newId("req", 14);
    currentRequest = { id: requestId, idempotency_key: idempotencyKey ?? null };
    try {
      const route = routes.find((candidate) => candidate.method === method && candidate.pattern.test(url.pathname));
      if (!route) {
        throw new ApiError(404, "invalid_request_error", `Unrecognized request URL (${method}: ${url.pathname}). This service implements only the part of the API Flyball uses.`);
      }
      // Like Stripe, refuse a parameter the endpoint does not take (the SDK's declared parameters).
      const known = KNOWN_PARAMETERS[route.params];
      const unknown = known && Object.keys(params).find((name) => !known.includes(name));
      if (unknown) throw new ApiError(400, "invalid_request_error", `Received unknown parameter: ${unknown}`, "parameter_unknown", unknown);
      const match = url.pathname.match(route.pattern)!.slice(1);
      const result = route.run(match, params);
      const paths = Array.isArray(params.expand) ? (params.expand as string[]) : params.expand ? [String(params.expand)] : [];
      payload = JSON.stringify(present(paths.length ? expand(result, paths) : result), null, 2);
    } catch (error) {
      if (!(error instanceof ApiError)) throw error;
      status = error.status;
      payload = errorPayload(error);
    } finally {
      currentRequest = null;
    }
    // Stripe does not store an answer that never ran (a 4xx from validation), except what changed state.
    if (slot && (status < 400 || state.seq !== before)) {
      state.idempotency[slot] = { method, path: url.pathname, body: raw, status, response: payload, at: wallClock() };
    }
    if (method !== "GET" || state.seq !== before) persist();
    schedule(0);
    send(res, status, payload, { "request-id": requestId, ...(idempotencyKey ? { "idempotency-key": idempotencyKey } : {}) });
  }

  async function handle(req: IncomingMessage, res: ServerResponse) {
    const url = new URL(req.url ?? "/", "http://localhost");
    if (url.pathname.startsWith("/v1/")) {
      try {
        await handleApi(req, res, url);
      } catch (error) {
        if (error instanceof ApiError) return send(res, error.status, errorPayload(error));
        throw error;
      }
      return;
    }
    const raw = req.method === "POST" ? await readBody(req) : "";
    const before = state.seq;
    const changedState = handlePage({ req, res, url, form: parseForm(raw), state, billing, publicUrl: publicUrl() });
    if (changedState || state.seq !== before) {
      persist();
      schedule(0);
    }
  }

  // ---------------------------------------------------------------- webhooks

  function webhookSecret(): string | null {
    if (options.webhookSecret) return options.webhookSecret;
    const file = options.secretFile ?? path.resolve(".local/stripe-webhook-secret");
    return existsSync(file) ? readFileSync(file, "utf8").trim() : null;
  }

  /** Stripe's scheme: `t=<unix seconds>,v1=<hex HMAC-SHA256 of "<t>.<body>">`. */
  function sign(body: string, secret: string, t = wallClock()): string {
    const v1 = createHmac("sha256", secret).update(`${t}.${body}`).digest("hex");
    return `t=${t},v1=${v1}`;
  }

  function schedule(delayMs: number) {
    if (closed || !options.webhookUrl) return;
    if (timer) clearTimeout(timer);
    timer = setTimeout(() => void deliverDue(), Math.max(0, delayMs));
    timer.unref?.();
  }

  /** Sends every due delivery once, in the order the events were raised; failures wait twice as long each time. */
  async function deliverDue() {
    timer = null;
    if (delivering || closed || !options.webhookUrl) return;
    delivering = true;
    try {
      const secret = webhookSecret();
      if (!secret) {
        // No secret yet (the app writes it on first start): try again shortly.
        return schedule(retryBaseMs);
      }
      for (const delivery of [...state.deliveries]) {
        if (closed) return;
        if (delivery.nextAttemptAt > Date.now()) continue;
        const event = state.objects[delivery.eventId];
        const body = JSON.stringify(event, null, 2);
        let ok = false;
        try {
          const response = await fetch(options.webhookUrl, {
            method: "POST",
            headers: { "content-type": "application/json; charset=utf-8", "stripe-signature": sign(body, secret), "user-agent": "Stripe/1.0 (+https://stripe.com/docs/webhooks)" },
            body,
            signal: AbortSignal.timeout(10_000),
          });
          await response.arrayBuffer();
          ok = response.ok;
          delivery.lastError = ok ? null : `HTTP ${response.status}`;
        } catch (error) {
          delivery.lastError = error instanceof Error ? error.message : String(error);
        }
        if (closed) return;
        delivery.attempts += 1;
        if (ok) {
          state.deliveries = state.deliveries.filter((d) => d !== delivery);
          if (event) event.pending_webhooks = 0;
        } else {
          delivery.nextAttemptAt = Date.now() + Math.min(RETRY_CAP_MS, retryBaseMs * 2 ** (delivery.attempts - 1));
        }
        persist();
      }
    } finally {
      delivering = false;
    }
    const next = Math.min(...state.deliveries.map((d) => d.nextAttemptAt));
    if (Number.isFinite(next)) schedule(next - Date.now());
  }

  // ---------------------------------------------------------------- start and stop

  billing.seed();
  for (const [slot, entry] of Object.entries(state.idempotency)) {
    if (entry.at <= wallClock() - IDEMPOTENCY_TTL_SECONDS) delete state.idempotency[slot];
  }
  // Deliveries left pending by the last run are tried again at once: the receiver has often
  // been restarted together with the fake.
  for (const delivery of state.deliveries) delivery.nextAttemptAt = Date.now();
  persist();
  // Subscriptions without a test clock renew on the wall clock; look once a minute.
  const renewals = setInterval(() => {
    const before = state.seq;
    billing.advanceWallClock();
    if (state.seq !== before) {
      persist();
      schedule(0);
    }
  }, 60_000);
  renewals.unref();

  server = createServer((req, res) => {
    handle(req, res).catch((error) => {
      if (!res.headersSent) send(res, 500, JSON.stringify({ error: { type: "api_error", message: String(error) } }));
      else res.end();
    });
  });

  return {
    server,
    state,
    /** The SDK parameter types the routes take, by name (shapes.test.ts keeps known-parameters.json in step). */
    parameterTypes: () => [...new Set(routes.map((route) => route.params))].sort(),
    /** Pending webhook deliveries (for tests and the overview page). */
    pendingDeliveries: () => state.deliveries.length,
    sign,
    listen(port: number, host = "127.0.0.1"): Promise<string> {
      return new Promise((resolve) => {
        server!.listen(port, host, () => {
          billing.advanceWallClock();
          persist();
          schedule(0);
          resolve(`http://${host}:${(server!.address() as AddressInfo).port}`);
        });
      });
    },
    close(): Promise<void> {
      closed = true;
      clearInterval(renewals);
      if (timer) clearTimeout(timer);
      return new Promise((resolve) => {
        server!.close(() => resolve());
        server!.closeAllConnections();
      });
    },
  };
}

export type StripeFake = ReturnType<typeof createStripeFake>;

// Run directly: `tsx fakes/stripe/server.ts`
if (process.argv[1] && path.resolve(process.argv[1]) === path.resolve(new URL(import.meta.url).pathname)) {
  const port = Number(process.env.STRIPE_FAKE_PORT ?? 3026);
  const host = process.env.STRIPE_FAKE_HOST ?? "127.0.0.1";
  const fake = createStripeFake({
    dataDir: process.env.STRIPE_FAKE_DIR ?? path.resolve("data/stripe"),
    webhookUrl: process.env.STRIPE_WEBHOOK_URL || null,
    webhookSecret: process.env.STRIPE_WEBHOOK_SECRET || null,
    publicUrl: process.env.STRIPE_FAKE_PUBLIC_URL || null,
  });
  void fake.listen(port, host).then((url) => console.log(`Local Stripe at ${url}/ (webhooks ${process.env.STRIPE_WEBHOOK_URL || "off"})`));
  const stop = () => void fake.close().then(() => process.exit(0));
  process.on("SIGTERM", stop);
  process.on("SIGINT", stop);
}
