// The fake's objects against the SDK's own type declarations: every property the `stripe`
// package declares as always present is there, and nothing the package does not declare is.
// The declarations are read with the TypeScript compiler, so a new SDK version re-checks them.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import Stripe from "stripe";
import ts from "typescript";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { SEEDED_LOOKUP_KEY } from "./billing";
import { createStripeFake, type StripeFake } from "./server";

const SHAPES = {
  customer: "Stripe.Customer",
  product: "Stripe.Product",
  price: "Stripe.Price",
  paymentMethod: "Stripe.PaymentMethod",
  testClock: "Stripe.TestHelpers.TestClock",
  subscription: "Stripe.Subscription",
  subscriptionItem: "Stripe.SubscriptionItem",
  invoice: "Stripe.Invoice",
  invoiceLine: "Stripe.InvoiceLineItem",
  checkoutSession: "Stripe.Checkout.Session",
  portalSession: "Stripe.BillingPortal.Session",
  event: "Stripe.Event",
  list: "Stripe.ApiList<Stripe.Price>",
} as const;
type ShapeName = keyof typeof SHAPES;

type Problem = string;

/**
 * What `value` lacks or has beyond the declared `type`, down through nested objects: a missing
 * required property, or one the type does not declare. Ids in place of expandable objects,
 * maps (metadata) and classes (Decimal) are taken as they are.
 */
function shapeProblems(checker: ts.TypeChecker, type: ts.Type, value: unknown, at: string, out: Problem[], depth = 0) {
  if (value === null || typeof value !== "object" || depth > 6) return;
  const declared = checker.getNonNullableType(type);
  if (Array.isArray(value)) {
    const element = checker.getIndexTypeOfType(declared, ts.IndexKind.Number);
    if (element) value.slice(0, 3).forEach((v, i) => shapeProblems(checker, element, v, `${at}[${i}]`, out, depth + 1));
    return;
  }
  const candidates = (declared.isUnion() ? declared.types : [declared]).filter(
    (t) => t.flags & ts.TypeFlags.Object && t.getCallSignatures().length === 0 && !((t.getSymbol()?.getFlags() ?? 0) & ts.SymbolFlags.Class),
  );
  if (candidates.length === 0) return;
  // A union told apart by `type` or `object` (events, deleted objects): the member the value names.
  for (const tag of ["type", "object"]) {
    const named = (value as Record<string, unknown>)[tag];
    const matching = candidates.filter((t) => {
      const prop = t.getProperty(tag);
      const literal = prop && checker.getTypeOfSymbol(prop);
      return literal?.isStringLiteral() && literal.value === named;
    });
    if (typeof named === "string" && matching.length > 0) {
      candidates.splice(0, candidates.length, ...matching);
      break;
    }
  }
  const keys = Object.keys(value).filter((k) => !(depth === 0 && k === "lastResponse"));
  const cover = (t: ts.Type) => keys.filter((k) => t.getProperty(k)).length;
  const best = candidates.reduce((a, b) => (cover(b) > cover(a) ? b : a));
  if (checker.getIndexInfosOfType(best).length > 0) return;
  const props = checker.getPropertiesOfType(best);
  if (props.length === 0) return;
  for (const p of props) {
    if (!(p.getFlags() & ts.SymbolFlags.Optional) && !keys.includes(p.getName())) out.push(`${at}.${p.getName()} is missing`);
  }
  for (const key of keys) {
    const prop = best.getProperty(key);
    if (!prop) out.push(`${at}.${key} is not declared`);
    else shapeProblems(checker, checker.getTypeOfSymbol(prop), (value as Record<string, unknown>)[key], `${at}.${key}`, out, depth + 1);
  }
}

/** The SDK's declared type of each shape, read with the TypeScript compiler. */
function readDeclarations(parameterTypes: string[]) {
  const probe = path.resolve("fakes/stripe/__shape-probe__.ts");
  const source = `import type Stripe from "stripe";\nexport type Shapes = {\n${Object.entries(SHAPES)
    .map(([k, t]) => `  ${k}: ${t};`)
    .join("\n")}\n};\nexport type Parameters = {\n${parameterTypes.map((t) => `  "${t}": Stripe.${t};`).join("\n")}\n};\n`;
  const options: ts.CompilerOptions = { module: ts.ModuleKind.ES2022, moduleResolution: ts.ModuleResolutionKind.Bundler, target: ts.ScriptTarget.ES2022, types: [], skipLibCheck: true, noEmit: true, strict: true };
  const host = ts.createCompilerHost(options);
  const { getSourceFile, fileExists, readFile } = host;
  host.getSourceFile = (name, version, ...rest) => (path.resolve(name) === probe ? ts.createSourceFile(name, source, version) : getSourceFile.call(host, name, version, ...rest));
  host.fileExists = (name) => path.resolve(name) === probe || fileExists.call(host, name);
  host.readFile = (name) => (path.resolve(name) === probe ? source : readFile.call(host, name));
  const program = ts.createProgram([probe], options, host);
  const checker = program.getTypeChecker();
  const file = program.getSourceFile(probe)!;
  const [shapes, parameters] = file.statements.filter(ts.isTypeAliasDeclaration).map((d) => checker.getTypeAtLocation(d.name)) as [ts.Type, ts.Type];
  const types = {} as Record<ShapeName, ts.Type>;
  for (const name of Object.keys(SHAPES) as ShapeName[]) {
    types[name] = checker.getTypeOfSymbol(shapes.getProperty(name)!);
    expect(checker.getPropertiesOfType(types[name]).length, `the SDK declares ${SHAPES[name]}`).toBeGreaterThan(2);
  }
  const parameterNames: Record<string, string[]> = {};
  for (const name of parameterTypes) {
    const type = checker.getTypeOfSymbol(parameters.getProperty(name)!);
    parameterNames[name] = checker.getPropertiesOfType(type).map((p) => p.getName()).sort();
    expect(type.flags & ts.TypeFlags.Any, `the SDK declares Stripe.${name}`).toBe(0);
  }
  return { checker, types, parameterNames };
}

let declarations: ReturnType<typeof readDeclarations>;
let fake: StripeFake;
let stripe: Stripe;
let dir: string;

beforeAll(async () => {
  dir = mkdtempSync(path.join(tmpdir(), "stripe-shapes-"));
  fake = createStripeFake({ dataDir: dir, webhookSecret: "whsec_shapes" });
  declarations = readDeclarations(fake.parameterTypes());
  const url = new URL(await fake.listen(0));
  stripe = new Stripe("sk_test_shapes", { host: url.hostname, port: Number(url.port), protocol: "http", telemetry: false, maxNetworkRetries: 0 });
}, 60_000);

afterAll(async () => {
  await fake.close();
  rmSync(dir, { recursive: true, force: true });
});

function expectShape(name: ShapeName, value: object) {
  const problems: Problem[] = [];
  shapeProblems(declarations.checker, declarations.types[name], value, SHAPES[name], problems);
  expect.soft(problems).toEqual([]);
}

describe("parameters against the SDK's declarations", () => {
  // `UPDATE_KNOWN_PARAMETERS=1 npx vitest run fakes/stripe/shapes` rewrites the file after an SDK upgrade or a new route.
  it("known-parameters.json lists what the SDK declares for each endpoint the fake serves", () => {
    const file = path.resolve("fakes/stripe/known-parameters.json");
    if (process.env.UPDATE_KNOWN_PARAMETERS) writeFileSync(file, `${JSON.stringify(declarations.parameterNames, null, 2)}\n`);
    expect(JSON.parse(readFileSync(file, "utf8"))).toEqual(declarations.parameterNames);
  });

  it("refuses a parameter the endpoint does not take, as Stripe does", async () => {
    const error = await stripe.customers.create({ email: "a@example.com", colour: "teal" } as Stripe.CustomerCreateParams).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(Stripe.errors.StripeInvalidRequestError);
    expect(error).toMatchObject({ statusCode: 400, code: "parameter_unknown", param: "colour", message: "Received unknown parameter: colour" });
  });
});

describe("object shapes against the SDK's declarations", () => {
  it("customers, products, prices, payment methods, test clocks and lists", async () => {
    const clock = await stripe.testHelpers.testClocks.create({ frozen_time: Date.UTC(2026, 4, 1) / 1000 });
    expectShape("testClock", clock);
    const customer = await stripe.customers.create({ email: "shape@example.com", test_clock: clock.id });
    expectShape("customer", customer);
    // The check itself sees a field too many, one too few, and one deeper down.
    const { invoice_settings, ...withoutSettings } = customer;
    const problems: Problem[] = [];
    shapeProblems(declarations.checker, declarations.types.customer, { ...withoutSettings, nickname: "x", invoice_settings: { ...invoice_settings, colour: 1 } }, "c", problems);
    shapeProblems(declarations.checker, declarations.types.customer, withoutSettings, "c", problems);
    expect(problems).toEqual(["c.nickname is not declared", "c.invoice_settings.colour is not declared", "c.invoice_settings is missing"]);
    const prices = await stripe.prices.list({ lookup_keys: [SEEDED_LOOKUP_KEY] });
    expectShape("list", prices);
    expectShape("price", prices.data[0]!);
    expectShape("product", await stripe.products.retrieve(prices.data[0]!.product as string));
    expectShape("paymentMethod", await stripe.paymentMethods.attach("pm_card_visa", { customer: customer.id }));
  });

  it("subscriptions, their items, invoices, lines, sessions and events", async () => {
    const [price] = (await stripe.prices.list({ lookup_keys: [SEEDED_LOOKUP_KEY] })).data;
    const clock = await stripe.testHelpers.testClocks.create({ frozen_time: Date.UTC(2026, 4, 1) / 1000 });
    const customer = await stripe.customers.create({ email: "shape@example.com", test_clock: clock.id });
    const pm = await stripe.paymentMethods.attach("pm_card_visa", { customer: customer.id });
    const sub = await stripe.subscriptions.create({ customer: customer.id, items: [{ price: price!.id, quantity: 2 }], default_payment_method: pm.id });
    expectShape("subscription", sub);
    expectShape("subscriptionItem", sub.items.data[0]!);
    await stripe.subscriptions.update(sub.id, { items: [{ id: sub.items.data[0]!.id, quantity: 4 }] });
    await stripe.testHelpers.testClocks.advance(clock.id, { frozen_time: sub.items.data[0]!.current_period_end + 3600 });
    const [invoice] = (await stripe.invoices.list({ subscription: sub.id, limit: 1 })).data;
    expectShape("invoice", invoice!);
    for (const line of invoice!.lines.data) expectShape("invoiceLine", line);
    expectShape("invoice", await stripe.invoices.createPreview({ customer: customer.id, subscription: sub.id }));
    expectShape(
      "checkoutSession",
      await stripe.checkout.sessions.create({ mode: "subscription", customer: customer.id, line_items: [{ price: price!.id, quantity: 1 }], success_url: "http://app.example/ok" }),
    );
    expectShape("portalSession", await stripe.billingPortal.sessions.create({ customer: customer.id, return_url: "http://app.example/" }));
    const events = await stripe.events.list({ limit: 100 });
    expect(events.data.length).toBeGreaterThan(5);
    for (const event of events.data) expectShape("event", event);
  });
});
