// Accessibility: axe-core's WCAG 2.0 and 2.1 A/AA rules on every page of app/routes.ts, as every
// role that may open it, at desktop and phone widths, plus a keyboard walk that every focused
// element shows its focus. Pages come from the route manifest, so a new page is checked without
// anyone adding it here; a new URL parameter fails loudly until PARAMETERS says where its value
// comes from. The tally (pages × roles × widths, violations) is printed at the end and kept in
// the Playwright output folder as accessibility-summary.json.
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from "node:fs";
import path from "node:path";
import { expect, test as base, type Page } from "@playwright/test";
import type { RouteConfigEntry } from "@react-router/dev/routes";
import axe from "axe-core";
import { and, asc, eq } from "drizzle-orm";
import { customer, digest, gainSet, loop, machine, member, organisation, release, site, user } from "~/.server/db/schema";
import routes from "~/routes";
import { createDeviceIdentity, DeviceClient, sampleDigest } from "../../scripts/simulator/device-client";
import { createInvitation } from "../factories";
import { ensureHealthDemo } from "./health-support";
import { closeDb, db } from "../support/db";
import { APP_URL, postJson, signIn } from "../support/http";
import { signInAs } from "./support";

const WCAG_TAGS = ["wcag2a", "wcag2aa", "wcag21a", "wcag21aa"];
const WIDTHS = [
  { width: 1280, height: 900 },
  { width: 390, height: 844 },
];
const SLUG = "corvid";
/** The signed-out visitor and the four roles that read pages (demo sign-ins in README.md). */
const ROLES = [
  { name: "visitor", email: null },
  { name: "owner", email: "owner@corvid.example" },
  { name: "engineer", email: "engineer@corvid.example" },
  { name: "viewer", email: "viewer@corvid.example" },
  { name: "site manager", email: "manager@halden.example" },
] as const;
type RoleName = (typeof ROLES)[number]["name"];

/** Every page (a route module with a component) in app/routes.ts, as its URL pattern. */
function pagePatterns(): string[] {
  const found: string[] = [];
  const walk = (entries: RouteConfigEntry[], parent: string) => {
    for (const entry of entries) {
      const full = entry.path ? `${parent}/${entry.path}` : parent;
      const source = readFileSync(path.join("app", entry.file), "utf8");
      if (/^export default /m.test(source)) found.push(full || "/");
      if (entry.children) walk(entry.children, full);
    }
  };
  walk(routes as RouteConfigEntry[], "");
  return [...new Set(found)];
}

/** What the seeded demo database gives the placeholders: see demoData below. */
type DemoData = { machineId: string; invitationId: string; gainSetId: string; findingId: string; loopId: string; siteId: string; releaseId: string };

/** Where each URL parameter's value comes from, keyed by the segment before it. */
const PARAMETERS: Record<string, (demo: DemoData) => string> = {
  "o/:slug": () => SLUG,
  // A Halden Plastics machine: every role, the site manager included, may see it.
  "machines/:id": (demo) => demo.machineId,
  "invitations/:id": (demo) => demo.invitationId,
  "gain-sets/:id": (demo) => demo.gainSetId,
  // A Halden Plastics machine's saturation finding, loop and site (tests/e2e/health-support.ts).
  "findings/:id": (demo) => demo.findingId,
  "loop/:id": (demo) => demo.loopId,
  "site/:id": (demo) => demo.siteId,
  "releases/:id": (demo) => demo.releaseId,
};

function fillParameters(pattern: string, demo: DemoData): string {
  return pattern.replace(/([\w-]+)\/:(\w+)\??/g, (whole, segment: string, name: string) => {
    const fill = PARAMETERS[`${segment}/:${name}`];
    if (!fill) throw new Error(`accessibility.spec.ts: add where "${segment}/:${name}" in ${pattern} gets its value to PARAMETERS`);
    return `${segment}/${fill(demo)}`;
  });
}

/** Pages whose main content appears only after an action: checked again in that state. */
const AFTER_ACTION: Record<string, { state: string; act: (page: Page) => Promise<void> }> = {
  "/o/:slug/bench": {
    state: "with the example step test",
    act: async (page) => {
      await page.getByRole("button", { name: "Load the example step test" }).click();
      await expect(page.getByRole("region", { name: "Tuning proposals" }).locator("tbody tr").first()).toBeVisible();
    },
  },
};

type Violation = { rule: string; impact: string | null | undefined; help: string; targets: string[] };
type Outcome = { role: RoleName; page: string; url: string; result: "checked" | "refused" | "redirected"; status: number; checks: { width: number; state: string; violations: Violation[] }[] };

async function runAxe(page: Page): Promise<Violation[]> {
  if (!(await page.evaluate(() => "axe" in window))) await page.evaluate(axe.source);
  const results = await page.evaluate((tags) => (window as unknown as { axe: typeof axe }).axe.run(document, { runOnly: { type: "tag", values: tags } }), WCAG_TAGS);
  return results.violations.map((v) => ({ rule: v.id, impact: v.impact, help: v.help, targets: v.nodes.map((n) => n.target.join(" ")) }));
}

/**
 * Every element a keyboard user can reach must draw an outline or a ring when focused. One Tab
 * puts Chromium in keyboard mode (so :focus-visible applies to programmatic focus), then each
 * reachable element is focused in turn and its computed style read.
 */
async function elementsWithoutVisibleFocus(page: Page): Promise<string[]> {
  await page.keyboard.press("Tab");
  return page.evaluate(() => {
    const reachable = [...document.querySelectorAll<HTMLElement>("a[href], button, input, select, textarea, summary, [tabindex]")].filter(
      (el) => el.tabIndex >= 0 && !(el as HTMLButtonElement).disabled && el.getClientRects().length > 0 && getComputedStyle(el).visibility !== "hidden",
    );
    const missing: string[] = [];
    for (const el of reachable) {
      el.focus();
      if (document.activeElement !== el) continue;
      const style = getComputedStyle(el);
      const outline = style.outlineStyle !== "none" && parseFloat(style.outlineWidth) > 0;
      const ring = style.boxShadow !== "none";
      if (!outline && !ring) missing.push(`${el.tagName.toLowerCase()} "${(el.getAttribute("aria-label") ?? el.textContent ?? "").trim().slice(0, 40)}"`);
    }
    (document.activeElement as HTMLElement | null)?.blur();
    return missing;
  });
}

async function checkAtEveryWidth(page: Page, outcome: Outcome, state: string) {
  for (const size of WIDTHS) {
    await page.setViewportSize(size);
    await settle(page);
    outcome.checks.push({ width: size.width, state, violations: await runAxe(page) });
  }
  await page.setViewportSize(WIDTHS[0]);
}

/** Opens every closed <details> (a chart's figures, for one), so axe sees what is inside; false if none. */
async function openDisclosures(page: Page): Promise<boolean> {
  return page.evaluate(() => {
    const closed = [...document.querySelectorAll("details:not([open])")] as HTMLDetailsElement[];
    for (const details of closed) details.open = true;
    return closed.length > 0;
  });
}

/** Charts redraw after a resize; wait two frames so axe sees the settled page. */
async function settle(page: Page) {
  await page.evaluate(() => new Promise((done) => requestAnimationFrame(() => requestAnimationFrame(done))));
}

function outcomesDir(outputDir: string) {
  return path.join(outputDir, "accessibility");
}

// The sign-in of each role happens once per worker; each test opens a context with its cookies.
const test = base.extend<object, { storageStateOf: (role: RoleName) => Promise<string | undefined>; demo: DemoData }>({
  storageStateOf: [
    async ({ browser }, use, workerInfo) => {
      const states = new Map<RoleName, Promise<string | undefined>>();
      await use((role) => {
        if (!states.has(role)) {
          states.set(
            role,
            (async () => {
              const email = ROLES.find((r) => r.name === role)!.email;
              if (!email) return undefined;
              const file = path.join(workerInfo.project.outputDir, "accessibility-states", `${role.replace(/\W/g, "-")}.json`);
              const context = await browser.newContext({ baseURL: workerInfo.project.use.baseURL });
              await signInAs(await context.newPage(), email);
              await context.storageState({ path: file });
              await context.close();
              return file;
            })(),
          );
        }
        return states.get(role)!;
      });
    },
    { scope: "worker" },
  ],
  demo: [
    async ({}, use) => {
      await use(await demoData());
      await closeDb();
    },
    { scope: "worker" },
  ],
});

/**
 * Ids for the placeholders, from the seeded demo database. The first Halden Plastics machine gets
 * a device and two hours of digests (once), so its page shows health and trend charts; the
 * signed-out visitor gets a pending invitation.
 */
async function demoData(): Promise<DemoData> {
  const [target] = await db()
    .select({ id: machine.id, organisationId: machine.organisationId })
    .from(machine)
    .innerJoin(site, and(eq(site.organisationId, machine.organisationId), eq(site.id, machine.siteId)))
    .innerJoin(customer, and(eq(customer.organisationId, site.organisationId), eq(customer.id, site.customerId)))
    .innerJoin(organisation, eq(organisation.id, machine.organisationId))
    .where(and(eq(organisation.slug, SLUG), eq(customer.name, "Halden Plastics")))
    .orderBy(asc(machine.serial))
    .limit(1);
  if (!target) throw new Error("the demo database has no Halden Plastics machine: run scripts/seed.ts");
  const [hasDigests] = await db()
    .select({ seq: digest.seq })
    .from(digest)
    .innerJoin(loop, and(eq(loop.organisationId, digest.organisationId), eq(loop.id, digest.loopId)))
    .where(eq(loop.machineId, target.id))
    .limit(1);
  if (!hasDigests) await giveDigests(target.id);

  const [owner] = await db()
    .select({ userId: user.id })
    .from(member)
    .innerJoin(user, eq(user.id, member.userId))
    .where(and(eq(member.organizationId, target.organisationId), eq(member.role, "owner")))
    .limit(1);
  const invitation = await createInvitation(db(), { organisationId: target.organisationId, inviterId: owner!.userId, email: `new-colleague-${Date.now()}@a11y.example`, role: "engineer" });
  // A proposed gain set: its page shows the review form and the caution.
  const [proposed] = await db()
    .select({ id: gainSet.id })
    .from(gainSet)
    .where(and(eq(gainSet.organisationId, target.organisationId), eq(gainSet.state, "proposed")))
    .orderBy(asc(gainSet.version))
    .limit(1);
  if (!proposed) throw new Error("the demo database has no proposed gain set: run scripts/seed.ts");
  const health = await ensureHealthDemo();
  const [first] = await db().select({ id: loop.id }).from(loop).where(eq(loop.machineId, target.id)).orderBy(asc(loop.key)).limit(1);
  const [place] = await db().select({ siteId: machine.siteId }).from(machine).where(eq(machine.id, target.id));
  const [demoRelease] = await db().select({ id: release.id }).from(release).where(eq(release.organisationId, target.organisationId)).orderBy(asc(release.createdAt)).limit(1);
  if (!demoRelease) throw new Error("the demo database has no release: run scripts/seed.ts");
  return { machineId: target.id, invitationId: invitation.id, gainSetId: proposed.id, findingId: health.chartFindingId, loopId: first!.id, siteId: place!.siteId, releaseId: demoRelease.id };
}

/** Enrol a device for the machine and post 24 five-minute windows per loop; the second loop saturates now and then. */
async function giveDigests(machineId: string) {
  const owner = await signIn("owner@corvid.example");
  const issued = await postJson(`/api/v1/o/${SLUG}/machines/${machineId}/enrolment-code`, {}, owner);
  expect(issued.status).toBe(201);
  const { enrolmentCode } = (await issued.json()) as { enrolmentCode: { code: string } };
  const device = new DeviceClient(APP_URL, await createDeviceIdentity());
  expect((await device.enrol(enrolmentCode.code)).status).toBe(201);
  const start = Date.now() - 24 * 300_000;
  const digests = (device.identity.loopKeys ?? []).flatMap((key, n) =>
    Array.from({ length: 24 }, (_, i) =>
      sampleDigest(key, i + 1, new Date(start + i * 300_000), 300, {
        iae: 10 + 4 * Math.sin(i / 3) + n * 3,
        satHighFrac: n === 1 && i % 5 === 0 ? 0.14 : 0.01,
        intClampFrac: n === 1 && i % 7 === 0 ? 0.12 : 0,
      }),
    ),
  );
  const posted = await device.postDigests(digests);
  expect(posted.status).toBe(200);
}

const PAGES = pagePatterns();

for (const role of ROLES) {
  test.describe(`as ${role.name}`, () => {
    for (const pattern of PAGES) {
      test(pattern, async ({ browser, baseURL, storageStateOf, demo }, testInfo) => {
        const url = fillParameters(pattern, demo);
        const context = await browser.newContext({ baseURL, storageState: await storageStateOf(role.name), viewport: WIDTHS[0] });
        const page = await context.newPage();
        const response = await page.goto(url);
        await page.waitForLoadState("networkidle");
        const status = response?.status() ?? 0;
        const landed = new URL(page.url()).pathname;
        const outcome: Outcome = { role: role.name, page: pattern, url, result: "checked", status, checks: [] };
        if (landed !== new URL(url, baseURL).pathname) {
          // Sent elsewhere (a visitor to sign-in, a member away from a visitor's page): that page has its own check.
          outcome.result = "redirected";
        } else {
          if (status >= 400) outcome.result = "refused"; // the error page a refused role sees is checked too
          const states = [{ state: "as loaded", act: async () => {} }, ...(AFTER_ACTION[pattern] && outcome.result === "checked" ? [AFTER_ACTION[pattern]] : [])];
          for (const { state, act } of states) {
            await page.setViewportSize(WIDTHS[0]);
            await act(page);
            await checkAtEveryWidth(page, outcome, state);
            if (await openDisclosures(page)) await checkAtEveryWidth(page, outcome, `${state}, disclosures open`);
          }
          const unfocusable = await elementsWithoutVisibleFocus(page);
          if (unfocusable.length) outcome.checks.push({ width: WIDTHS[0].width, state: "keyboard walk", violations: [{ rule: "focus-visible", impact: "serious", help: "Focused elements must show their focus", targets: unfocusable }] });
        }
        await context.close();

        mkdirSync(outcomesDir(testInfo.project.outputDir), { recursive: true });
        writeFileSync(path.join(outcomesDir(testInfo.project.outputDir), `${role.name}${pattern}.json`.replace(/[^\w.-]/g, "_")), JSON.stringify(outcome));
        const violations = outcome.checks.flatMap((c) => c.violations.map((v) => `${c.width} px ${c.state}: ${v.rule} (${v.impact}) ${v.help}\n    ${v.targets.slice(0, 8).join("\n    ")}`));
        expect(violations, `${role.name} on ${url}`).toEqual([]);
      });
    }
  });
}

test.afterAll(async ({}, testInfo) => {
  const dir = outcomesDir(testInfo.project.outputDir);
  if (!existsSync(dir)) return;
  const outcomes: Outcome[] = readdirSync(dir).map((file) => JSON.parse(readFileSync(path.join(dir, file), "utf8")));
  const checked = outcomes.filter((o) => o.result === "checked");
  const pageChecks = checked.flatMap((o) => o.checks.filter((c) => c.state === "as loaded"));
  const violations = outcomes.flatMap((o) => o.checks).reduce((n, c) => n + c.violations.reduce((m, v) => m + v.targets.length, 0), 0);
  const summary = {
    pages: PAGES.length,
    roles: ROLES.length,
    widths: WIDTHS.map((w) => w.width),
    pagesOpenedByRole: checked.length,
    pageChecks: pageChecks.length,
    checksInOtherStates: checked.flatMap((o) => o.checks.filter((c) => c.state !== "as loaded" && c.state !== "keyboard walk")).length,
    refusedPagesChecked: outcomes.filter((o) => o.result === "refused").length,
    redirected: outcomes.filter((o) => o.result === "redirected").length,
    violations,
    byRole: Object.fromEntries(ROLES.map((r) => [r.name, checked.filter((o) => o.role === r.name).map((o) => o.page)])),
  };
  writeFileSync(path.join(testInfo.project.outputDir, "accessibility-summary.json"), JSON.stringify(summary, null, 2));
  console.log(
    `Accessibility: ${summary.pages} pages × ${summary.roles} roles (visitor included) × ${WIDTHS.length} widths: ` +
      `${summary.pagesOpenedByRole} page–role pairs a role may open, ${summary.pageChecks} page checks ` +
      `(+ ${summary.checksInOtherStates} after an action or with disclosures open, ${summary.refusedPagesChecked} refusal pages, ${summary.redirected} redirects); ` +
      `${violations} violations.`,
  );
});
