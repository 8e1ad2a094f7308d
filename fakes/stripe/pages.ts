// The fake's pages for people: the card page a checkout session's `url` opens, the billing
// portal (change the card, cancel or keep the subscription), an invoice page, and an overview.
// Test cards only: 4242 4242 4242 4242 is charged, 4000 0000 0000 0002 is declined, and
// 4000 0025 0000 3155 asks the holder to confirm with their bank first.
import type { IncomingMessage, ServerResponse } from "node:http";
import { ApiError, formatMoney, TEST_CARDS, type Billing, type Params } from "./billing";
import type { State, StripeObject } from "./state";

type PageContext = { req: IncomingMessage; res: ServerResponse; url: URL; form: Params; state: State; billing: Billing; publicUrl: string };

const escapeHtml = (value: unknown): string => String(value ?? "").replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
const day = (t: number | null) => (t ? new Date(t * 1000).toISOString().slice(0, 10) : "—");

const page = (title: string, body: string) => `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width,initial-scale=1"><title>${escapeHtml(title)}</title>
<style>body{font-family:system-ui,sans-serif;margin:0;background:#faf8f3;color:#1f1d1a}main{max-width:44rem;margin:0 auto;padding:1.5rem}a{color:#0e5a5e}
h1{font-size:22px}h2{font-size:16px;margin-top:1.5rem}.meta{color:#57534e;font-size:14px}.box{background:#fff;border:1px solid #e2ddd2;padding:1rem;margin:1rem 0}
label{display:block;font-size:14px;margin:.75rem 0 .25rem}input{font:inherit;padding:.4rem .5rem;border:1px solid #8a847c;width:100%;box-sizing:border-box}
.row{display:flex;gap:.75rem}.row>div{flex:1}button{font:inherit;padding:.5rem 1rem;margin-top:1rem;border:1px solid #0e5a5e;background:#0e5a5e;color:#fff;cursor:pointer}
button.quiet{background:#fff;color:#0e5a5e}.error{color:#b42318;font-weight:600}.ok{color:#2b6e41;font-weight:600}
table{width:100%;border-collapse:collapse;background:#fff;border:1px solid #e2ddd2}td,th{padding:.4rem .6rem;border-bottom:1px solid #e2ddd2;text-align:left;font-size:14px}
td.num{text-align:right;font-variant-numeric:tabular-nums}th{font-size:12px;text-transform:uppercase;color:#57534e}</style></head><body><main>${body}</main></body></html>`;

function html(res: ServerResponse, status: number, body: string) {
  res.writeHead(status, { "content-type": "text/html; charset=utf-8", "content-length": Buffer.byteLength(body), "cache-control": "no-store" });
  res.end(body);
}

function redirect(res: ServerResponse, location: string) {
  res.writeHead(303, { location });
  res.end();
}

const notFound = (res: ServerResponse, what: string) => html(res, 404, page("Not found", `<h1>Not found</h1><p>No ${escapeHtml(what)} with that address.</p>`));

const TEST_CARD_HELP = `<p class="meta">This is Flyball's local payment service: no money moves. Use one of the test cards:
4242 4242 4242 4242 (accepted), 4000 0000 0000 0002 (declined) or 4000 0025 0000 3155 (your bank asks you to confirm). Any future expiry date and any three-digit code.</p>`;

type Card = { number: string; expMonth: number; expYear: number; name: string | null };

function readCard(form: Params): Card | string {
  const number = String(form.number ?? "").replace(/[\s-]/g, "");
  const [mm, yy] = String(form.expiry ?? "").split("/").map((part) => Number(part.trim()));
  const cvc = String(form.cvc ?? "").trim();
  if (!/^\d{12,19}$/.test(number)) return "Enter the card number (digits only).";
  if (!mm || mm < 1 || mm > 12 || yy === undefined || !Number.isInteger(yy)) return "Enter the expiry date as MM / YY.";
  const year = yy < 100 ? 2000 + yy : yy;
  const now = new Date();
  if (year < now.getUTCFullYear() || (year === now.getUTCFullYear() && mm < now.getUTCMonth() + 1)) return "That card has expired.";
  if (!/^\d{3,4}$/.test(cvc)) return "Enter the three-digit security code.";
  if (!TEST_CARDS[number]) return "That is not one of the test cards this service accepts.";
  return { number, expMonth: mm, expYear: year, name: String(form.name ?? "").trim() || null };
}

function cardFields(form: Params = {}) {
  return `<label for="name">Name on the card</label><input id="name" name="name" autocomplete="cc-name" value="${escapeHtml(form.name)}">
<label for="number">Card number</label><input id="number" name="number" inputmode="numeric" autocomplete="cc-number" required value="${escapeHtml(form.number)}">
<div class="row"><div><label for="expiry">Expiry (MM / YY)</label><input id="expiry" name="expiry" autocomplete="cc-exp" required placeholder="12 / 34" value="${escapeHtml(form.expiry)}"></div>
<div><label for="cvc">Security code</label><input id="cvc" name="cvc" inputmode="numeric" autocomplete="cc-csc" required value="${escapeHtml(form.cvc)}"></div></div>`;
}

// ------------------------------------------------------------------ checkout

function checkoutPage(ctx: PageContext, session: StripeObject, message: string | null, form: Params = {}, status = 200) {
  const price = ctx.state.objects[session._pending.price]!;
  const product = ctx.state.objects[price.product];
  const total = formatMoney(session.amount_total, session.currency);
  const body = `<h1>Subscribe to ${escapeHtml(product?.name ?? "Flyball")}</h1>
<div class="box"><p>${escapeHtml(session._pending.quantity)} × ${escapeHtml(formatMoney(price.unit_amount, price.currency))} per ${escapeHtml(price.recurring.interval)}</p>
<p><strong>${escapeHtml(total)}</strong> now, then every ${escapeHtml(price.recurring.interval)}.</p></div>
${message ? `<p class="error" role="alert">${escapeHtml(message)}</p>` : ""}
<form method="post" action="/pay/${escapeHtml(session.id)}">${cardFields(form)}<button type="submit">Pay ${escapeHtml(total)} and subscribe</button></form>
${session.cancel_url ? `<p><a href="${escapeHtml(session.cancel_url)}">Back without subscribing</a></p>` : ""}
${TEST_CARD_HELP}`;
  html(ctx.res, status, page("Subscribe", body));
}

function confirmPage(ctx: PageContext, session: StripeObject, form: Params) {
  const hidden = ["name", "number", "expiry", "cvc"].map((f) => `<input type="hidden" name="${f}" value="${escapeHtml(form[f])}">`).join("");
  const body = `<h1>Confirm with your bank</h1>
<div class="box"><p>Your bank asks you to confirm the payment of <strong>${escapeHtml(formatMoney(session.amount_total, session.currency))}</strong> with the card ending in ${escapeHtml(String(form.number).replace(/\s/g, "").slice(-4))}.</p>
<p class="meta">In this test service, choose what the bank's check answers.</p>
<form method="post" action="/pay/${escapeHtml(session.id)}/confirm">${hidden}
<button type="submit" name="decision" value="approve">Confirm the payment</button>
<button type="submit" name="decision" value="refuse" class="quiet">Do not confirm</button></form></div>`;
  html(ctx.res, 200, page("Confirm the payment", body));
}

function finishCheckout(ctx: PageContext, session: StripeObject, card: Card, authenticated: boolean): boolean {
  try {
    ctx.billing.completeCheckout(session.id, { ...card, authenticated });
  } catch (error) {
    if (!(error instanceof ApiError)) throw error;
    if (error.code === "authentication_required") {
      confirmPage(ctx, session, ctx.form);
      return false;
    }
    checkoutPage(ctx, session, error.message, { ...ctx.form, number: "" }, 402);
    return true;
  }
  redirect(ctx.res, String(session.success_url).replace("{CHECKOUT_SESSION_ID}", session.id));
  return true;
}

function handleCheckout(ctx: PageContext, sessionId: string, action: string | undefined): boolean {
  const session = ctx.state.objects[sessionId];
  if (!session || session.object !== "checkout.session") {
    notFound(ctx.res, "checkout");
    return false;
  }
  if (session.status !== "open") {
    const done = session.status === "complete" ? `<p class="ok">This subscription is paid for.</p><p><a href="${escapeHtml(String(session.success_url).replace("{CHECKOUT_SESSION_ID}", session.id))}">Continue</a></p>` : "<p>This checkout has expired.</p>";
    html(ctx.res, 200, page("Checkout", `<h1>Checkout</h1>${done}`));
    return false;
  }
  if (ctx.req.method === "GET" && !action) {
    checkoutPage(ctx, session, null);
    return false;
  }
  if (ctx.req.method !== "POST") {
    notFound(ctx.res, "page");
    return false;
  }
  const card = readCard(ctx.form);
  if (typeof card === "string") {
    checkoutPage(ctx, session, card, ctx.form, 400);
    return false;
  }
  if (action === "confirm") {
    if (ctx.form.decision !== "approve") {
      checkoutPage(ctx, session, "Your bank did not confirm the payment. Nothing was charged; try again or use another card.", { ...ctx.form, number: "" }, 402);
      return false;
    }
    return finishCheckout(ctx, session, card, true);
  }
  return finishCheckout(ctx, session, card, false);
}

// ------------------------------------------------------------------ portal

function portalPage(ctx: PageContext, portal: StripeObject, message: { text: string; ok: boolean } | null, status = 200) {
  const { objects } = ctx.state;
  const customer = objects[portal.customer]!;
  const subs = Object.values(objects).filter((o) => o.object === "subscription" && o.customer === customer.id).sort((a, b) => b.created - a.created);
  const pm = objects[customer.invoice_settings.default_payment_method ?? ""];
  const invoices = Object.values(objects).filter((o) => o.object === "invoice" && o.customer === customer.id).sort((a, b) => b.created - a.created);
  const subRows = subs
    .map((s) => {
      const item = s.items.data[0];
      const product = objects[item.price.product];
      const state =
        s.status === "canceled" ? `Ended ${day(s.ended_at)}` :
        s.cancel_at_period_end ? `Ends ${day(item.current_period_end)}` :
        s.status === "past_due" ? `<span class="error">Payment overdue</span>` :
        s.status === "trialing" ? `Trial until ${day(s.trial_end)}` :
        s.status === "active" ? `Renews ${day(item.current_period_end)}` : escapeHtml(s.status);
      const actions =
        s.status === "canceled" ? "" :
        s.cancel_at_period_end
          ? `<form method="post" action="/portal/${escapeHtml(portal.id)}/resume"><input type="hidden" name="subscription" value="${escapeHtml(s.id)}"><button type="submit" class="quiet">Keep the subscription</button></form>`
          : `<form method="post" action="/portal/${escapeHtml(portal.id)}/cancel"><input type="hidden" name="subscription" value="${escapeHtml(s.id)}"><button type="submit" class="quiet">Cancel at the end of the period</button></form>`;
      return `<div class="box"><p><strong>${escapeHtml(product?.name ?? "Subscription")}</strong>: ${escapeHtml(item.quantity)} × ${escapeHtml(formatMoney(item.price.unit_amount, item.price.currency))} per ${escapeHtml(item.price.recurring.interval)}</p><p>${state}</p>${actions}</div>`;
    })
    .join("");
  const invoiceRows = invoices
    .map((i) => `<tr><td><a href="/invoices/${escapeHtml(i.id)}">${escapeHtml(i.number ?? i.id)}</a></td><td>${day(i.created)}</td><td>${escapeHtml(i.status)}</td><td class="num">${escapeHtml(formatMoney(i.amount_due, i.currency))}</td></tr>`)
    .join("");
  const body = `<h1>Billing for ${escapeHtml(customer.name ?? customer.email ?? customer.id)}</h1>
${message ? `<p class="${message.ok ? "ok" : "error"}" role="${message.ok ? "status" : "alert"}">${escapeHtml(message.text)}</p>` : ""}
<h2>Subscription</h2>${subRows || "<p>No subscription.</p>"}
<h2>Card</h2><div class="box"><p>${pm ? `${escapeHtml(pm.card.brand.toUpperCase())} ending in ${escapeHtml(pm.card.last4)}, expires ${escapeHtml(String(pm.card.exp_month).padStart(2, "0"))} / ${escapeHtml(pm.card.exp_year)}` : "No card on file."}</p>
<form method="post" action="/portal/${escapeHtml(portal.id)}/card">${cardFields()}<button type="submit">Use this card</button></form></div>
<h2>Invoices</h2>${invoiceRows ? `<table><thead><tr><th>Number</th><th>Date</th><th>Status</th><th>Amount</th></tr></thead><tbody>${invoiceRows}</tbody></table>` : "<p>No invoices yet.</p>"}
${portal.return_url ? `<p><a href="${escapeHtml(portal.return_url)}">Back to Flyball</a></p>` : ""}
${TEST_CARD_HELP}`;
  html(ctx.res, status, page("Billing", body));
}

function handlePortal(ctx: PageContext, portalId: string, action: string | undefined): boolean {
  const portal = ctx.state.objects[portalId];
  if (!portal || portal.object !== "billing_portal.session") {
    notFound(ctx.res, "billing page");
    return false;
  }
  if (ctx.req.method === "GET" && !action) {
    portalPage(ctx, portal, null);
    return false;
  }
  if (ctx.req.method !== "POST") {
    notFound(ctx.res, "page");
    return false;
  }
  const subId = String(ctx.form.subscription ?? "");
  const sub = ctx.state.objects[subId];
  const ownSub = sub?.object === "subscription" && sub.customer === portal.customer ? sub : null;
  if (action === "cancel" || action === "resume") {
    if (!ownSub) {
      portalPage(ctx, portal, { text: "That subscription is not yours.", ok: false }, 404);
      return false;
    }
    ctx.billing.updateSubscription(ownSub.id, { cancel_at_period_end: action === "cancel" ? "true" : "false" });
    portalPage(ctx, portal, { text: action === "cancel" ? "Your subscription ends at the end of the current period." : "Your subscription continues.", ok: true });
    return true;
  }
  if (action === "card") {
    const card = readCard(ctx.form);
    if (typeof card === "string") {
      portalPage(ctx, portal, { text: card, ok: false }, 400);
      return false;
    }
    if (TEST_CARDS[card.number]!.behaviour === "declines") {
      portalPage(ctx, portal, { text: "Your card was declined. The card on file is unchanged.", ok: false }, 402);
      return false;
    }
    const { failures } = ctx.billing.replaceCard(portal.customer, card);
    portalPage(ctx, portal, failures.length ? { text: `The card is saved, but an open invoice could not be paid: ${failures[0]}`, ok: false } : { text: "The card is saved.", ok: true });
    return true;
  }
  notFound(ctx.res, "page");
  return false;
}

// ------------------------------------------------------------------ invoice and overview

function invoicePage(ctx: PageContext, invoiceId: string) {
  const invoice = ctx.state.objects[invoiceId];
  if (!invoice || invoice.object !== "invoice") return notFound(ctx.res, "invoice");
  const rows = invoice.lines.data
    .map((l: StripeObject) => `<tr><td>${escapeHtml(l.description)}</td><td>${day(l.period.start)} – ${day(l.period.end)}</td><td class="num">${escapeHtml(formatMoney(l.amount, l.currency))}</td></tr>`)
    .join("");
  const statusText = invoice.status === "paid" ? `<p class="ok">Paid ${day(invoice.status_transitions.paid_at)}</p>` : invoice.status === "open" ? `<p class="error">Not paid yet${invoice.attempt_count ? ": the last charge failed" : ""}.</p>` : `<p>${escapeHtml(invoice.status)}</p>`;
  const body = `<h1>Invoice ${escapeHtml(invoice.number ?? invoice.id)}</h1>
<p class="meta">Issued ${day(invoice.created)} to ${escapeHtml(invoice.customer_name ?? invoice.customer_email ?? invoice.customer)}</p>${statusText}
<table><thead><tr><th>Item</th><th>Period</th><th>Amount</th></tr></thead><tbody>${rows}</tbody>
<tfoot><tr><th colspan="2">Total</th><td class="num"><strong>${escapeHtml(formatMoney(invoice.total, invoice.currency))}</strong></td></tr></tfoot></table>`;
  html(ctx.res, 200, page(`Invoice ${invoice.number ?? invoice.id}`, body));
}

function overviewPage(ctx: PageContext) {
  const objects = Object.values(ctx.state.objects).filter((o) => !o.deleted);
  const customers = objects.filter((o) => o.object === "customer").sort((a, b) => b.created - a.created);
  const rows = customers
    .map((c) => {
      const subs = objects.filter((o) => o.object === "subscription" && o.customer === c.id);
      const invoices = objects.filter((o) => o.object === "invoice" && o.customer === c.id).sort((a, b) => b.created - a.created);
      const latest = invoices[0];
      const sub = subs.sort((a, b) => b.created - a.created)[0];
      return `<tr><td>${escapeHtml(c.name ?? c.email ?? "—")}<br><span class="meta">${escapeHtml(c.id)}</span></td><td>${sub ? `${escapeHtml(sub.status)}, ${escapeHtml(sub.items.data[0].quantity)} machines` : "—"}</td>
<td>${latest ? `<a href="/invoices/${escapeHtml(latest.id)}">${escapeHtml(latest.number)}</a> ${escapeHtml(latest.status)}` : "—"}</td><td class="num">${invoices.length}</td></tr>`;
    })
    .join("");
  const prices = objects.filter((o) => o.object === "price");
  const body = `<h1>Local payment service</h1><p class="meta">Flyball's stand-in for Stripe: customers, subscriptions and invoices it holds. Nothing leaves this machine.
Pending webhook deliveries: ${ctx.state.deliveries.length}.</p>
<h2>Prices</h2><ul>${prices.map((p) => `<li>${escapeHtml(p.lookup_key ?? p.id)}: ${escapeHtml(formatMoney(p.unit_amount, p.currency))} per ${escapeHtml(p.recurring?.interval ?? "payment")}</li>`).join("")}</ul>
<h2>Customers</h2>${rows ? `<table><thead><tr><th>Customer</th><th>Subscription</th><th>Latest invoice</th><th>Invoices</th></tr></thead><tbody>${rows}</tbody></table>` : "<p>No customers yet.</p>"}`;
  html(ctx.res, 200, page("Local payment service", body));
}

/** Serves a page; true when it changed the fake's state. */
export function handlePage(ctx: PageContext): boolean {
  const [section, id, action] = ctx.url.pathname.split("/").filter(Boolean);
  if (ctx.req.method === "GET" && !section) {
    overviewPage(ctx);
    return false;
  }
  if (section === "pay" && id) return handleCheckout(ctx, id, action);
  if (section === "portal" && id) return handlePortal(ctx, id, action);
  if (section === "invoices" && id && ctx.req.method === "GET") {
    invoicePage(ctx, id);
    return false;
  }
  notFound(ctx.res, "page");
  return false;
}
