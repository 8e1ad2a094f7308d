// Tenant isolation and roles on the server: every page under /o/:slug refuses outsiders and
// opens for members, and a role without member management cannot change roles by forging a request.
import { and, asc, eq, inArray } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { RouteConfigEntry } from "@react-router/dev/routes";
import routes from "~/routes";
import { apiToken, auditEvent, finding, gainSet, invitation, loop, machine, machineModel, member, organisation, release, site, user } from "~/.server/db/schema";
import { get, postForm, signIn, type Session } from "../support/http";
import { closeDb, db } from "../support/db";
import { uniqueSuffix } from "../factories";

afterAll(closeDb);

/** Every page path under o/:slug in app/routes.ts, as declared (params unfilled). */
function organisationPagePatterns(): string[] {
  const paths: string[] = [];
  const walk = (entries: RouteConfigEntry[], base: string) => {
    for (const entry of entries) {
      const full = entry.path ? `${base}/${entry.path}` : base;
      if (full.startsWith("/o/:slug")) paths.push(full);
      if (entry.children) walk(entry.children, full);
    }
  };
  walk(routes as RouteConfigEntry[], "");
  return [...new Set(paths)];
}

async function firstMachineId(slug: string): Promise<string> {
  const [row] = await db()
    .select({ id: machine.id })
    .from(machine)
    .innerJoin(organisation, eq(organisation.id, machine.organisationId))
    .where(eq(organisation.slug, slug))
    .orderBy(asc(machine.serial))
    .limit(1);
  if (!row) throw new Error(`the demo seed has no machine in ${slug}`);
  return row.id;
}

async function firstGainSetId(slug: string): Promise<string> {
  const [row] = await db()
    .select({ id: gainSet.id })
    .from(gainSet)
    .innerJoin(organisation, eq(organisation.id, gainSet.organisationId))
    .where(eq(organisation.slug, slug))
    .orderBy(asc(gainSet.createdAt), asc(gainSet.version))
    .limit(1);
  if (!row) throw new Error(`the demo seed has no gain set in ${slug}`);
  return row.id;
}

async function firstReleaseId(slug: string): Promise<string> {
  const [row] = await db()
    .select({ id: release.id })
    .from(release)
    .innerJoin(organisation, eq(organisation.id, release.organisationId))
    .where(eq(organisation.slug, slug))
    .orderBy(asc(release.createdAt))
    .limit(1);
  if (!row) throw new Error(`the demo seed has no release in ${slug}`);
  return row.id;
}

/**
 * Where a page's params get a real id of the organisation from the seeded demo, by the param
 * and the path segment before it. A page with a param this table cannot fill fails loudly:
 * add a row for it, so the page is opened with an id that exists (a made-up id would pass
 * even if the page answered 404 to everyone).
 */
const REAL_IDS: Record<string, (slug: string) => Promise<string>> = {
  "machines/:id": firstMachineId,
  "gain-sets/:id": firstGainSetId,
  "findings/:id": firstFindingId,
  "loop/:id": async (slug) => (await firstLoopOf(await firstMachineId(slug))).id,
  "site/:id": async (slug) => (await one(db().select({ id: machine.siteId }).from(machine).where(eq(machine.id, await firstMachineId(slug))))).id,
  "releases/:id": firstReleaseId,
};

async function one<T>(rows: Promise<T[]>): Promise<T> {
  const [row] = await rows;
  if (!row) throw new Error("the demo seed lacks a row this page needs");
  return row;
}

async function firstLoopOf(machineId: string) {
  return one(db().select({ id: loop.id, organisationId: loop.organisationId }).from(loop).where(eq(loop.machineId, machineId)).orderBy(asc(loop.key)).limit(1));
}

/** A finding of the organisation; one is recorded on its first machine when the demo has none yet. */
async function firstFindingId(slug: string): Promise<string> {
  const machineId = await firstMachineId(slug);
  const target = await firstLoopOf(machineId);
  const [existing] = await db().select({ id: finding.id }).from(finding).where(eq(finding.organisationId, target.organisationId)).orderBy(asc(finding.openedAt)).limit(1);
  if (existing) return existing.id;
  const [created] = await db()
    .insert(finding)
    .values({
      organisationId: target.organisationId,
      machineId,
      loopId: target.id,
      kind: "silent",
      severity: "warning",
      summary: "No digest received yet.",
      evidence: { metric: "silence.secondsSinceDigest", value: null, threshold: null, unit: "s", windowStart: null, windowEnd: null, figures: {} },
    })
    .returning({ id: finding.id });
  return created!.id;
}

/** Params of a page pattern other than :slug, each with the key REAL_IDS knows it by. */
function paramKinds(pattern: string): { token: string; kind: string }[] {
  const segments = pattern.split("/");
  return segments.flatMap((segment, i) => {
    if (segment === "*") return [{ token: segment, kind: `${segments[i - 1]}/*` }];
    if (!segment.startsWith(":") || segment === ":slug") return [];
    return [{ token: segment, kind: `${segments[i - 1]}/${segment.replace(/\?$/, "")}` }];
  });
}

/** The page's path for the organisation `slug`, with real ids of organisation `idsOf`. */
async function pagePath(pattern: string, slug: string, idsOf = slug): Promise<string> {
  let path = pattern.replace(":slug", slug);
  for (const { token, kind } of paramKinds(pattern)) {
    const source = REAL_IDS[kind];
    if (!source) throw new Error(`no real id for "${kind}" in ${pattern}: add a row to REAL_IDS in tests/integration/tenancy.test.ts`);
    path = path.replace(token, await source(idsOf));
  }
  return path;
}

async function memberIdOf(email: string, slug = "corvid") {
  const [row] = await db()
    .select({ id: member.id, role: member.role })
    .from(member)
    .innerJoin(user, eq(user.id, member.userId))
    .innerJoin(organisation, eq(organisation.id, member.organizationId))
    .where(and(eq(user.email, email), eq(organisation.slug, slug)));
  return row!;
}

let outsider: Session;
let engineer: Session;
let corvidOwner: Session;

beforeAll(async () => {
  outsider = await signIn("owner@pellworth.example");
  engineer = await signIn("engineer@corvid.example");
  corvidOwner = await signIn("owner@corvid.example");
});

describe("tenant isolation", () => {
  const pages = organisationPagePatterns();
  const withIds = pages.filter((p) => paramKinds(p).length > 0);

  it("finds the organisation pages in the route config", () => {
    expect(pages).toContain("/o/:slug");
    expect(pages).toContain("/o/:slug/team");
    expect(withIds).toContain("/o/:slug/machines/:id");
  });

  it("has a real id for every param of every page", async () => {
    for (const page of pages) expect(await pagePath(page, "corvid")).not.toMatch(/[:*]/);
  });

  // Each organisation's own owner opens every page with that organisation's real ids; the
  // owner of the other organisation gets 404 at the very same address.
  const viewpoints = [
    { slug: "corvid", member: () => corvidOwner, outsider: () => outsider, outsiderName: "Pellworth's owner" },
    { slug: "pellworth", member: () => outsider, outsider: () => corvidOwner, outsiderName: "Corvid's owner" },
  ];

  describe.each(viewpoints)("$slug", ({ slug, member: memberOf, outsider: outsiderOf, outsiderName }) => {
    it.each(pages)(`${outsiderName} gets 404 for %s`, async (page) => {
      const response = await get(await pagePath(page, slug), outsiderOf());
      expect(response.status).toBe(404);
    });

    it.each(pages)("its own owner opens %s", async (page) => {
      const response = await get(await pagePath(page, slug), memberOf());
      expect(response.status).toBe(200);
    });
  });

  it.each(withIds)("a member gets 404 for another organisation's ids under their own slug on %s", async (page) => {
    expect((await get(await pagePath(page, "pellworth", "corvid"), outsider)).status).toBe(404);
    expect((await get(await pagePath(page, "corvid", "pellworth"), corvidOwner)).status).toBe(404);
  });

  it("sends a signed-out visitor to sign in", async () => {
    const response = await get("/o/corvid/team");
    expect(response.status).toBe(302);
    expect(response.headers.get("location")).toContain("/sign-in?next=");
  });

  it("answers 404 for an organisation that does not exist, like for a foreign one", async () => {
    expect((await get("/o/no-such-organisation", outsider)).status).toBe(404);
  });
});

describe("roles on the team page", () => {
  it("refuses a forged role change from an engineer with 403 and changes nothing", async () => {
    const viewer = await memberIdOf("viewer@corvid.example");
    const response = await postForm("/o/corvid/team", { intent: "change-role", memberId: viewer.id, role: "admin" }, engineer);
    expect(response.status).toBe(403);
    expect((await memberIdOf("viewer@corvid.example")).role).toBe("viewer");
  });

  it("refuses an engineer's forged invitation and removal", async () => {
    const viewer = await memberIdOf("viewer@corvid.example");
    expect((await postForm("/o/corvid/team", { intent: "remove", id: viewer.id }, engineer)).status).toBe(403);
    expect((await postForm("/o/corvid/team", { intent: "invite", email: "x@example.com", role: "admin" }, engineer)).status).toBe(403);
    expect((await memberIdOf("viewer@corvid.example")).role).toBe("viewer");
  });

  it("does not let an admin demote or remove the owner", async () => {
    const admin = await signIn("admin@corvid.example");
    const owner = await memberIdOf("owner@corvid.example");
    expect((await postForm("/o/corvid/team", { intent: "change-role", memberId: owner.id, role: "viewer" }, admin)).status).toBe(403);
    expect((await postForm("/o/corvid/team", { intent: "remove", id: owner.id }, admin)).status).toBe(403);
    expect((await memberIdOf("owner@corvid.example")).role).toBe("owner");
  });

  it("does not let the last owner leave", async () => {
    const pellworthOwner = outsider;
    const response = await postForm("/o/pellworth/team", { intent: "leave" }, pellworthOwner);
    expect(response.status).toBe(409);
    expect(await response.text()).toContain("last owner");
  });

  it("refuses a role that does not exist", async () => {
    const owner = await signIn("owner@corvid.example");
    const viewer = await memberIdOf("viewer@corvid.example");
    const response = await postForm("/o/corvid/team", { intent: "change-role", memberId: viewer.id, role: "superuser" }, owner);
    expect(response.status).toBe(400);
    expect((await memberIdOf("viewer@corvid.example")).role).toBe("viewer");
  });
});

// A member of Pellworth (its owner, so every capability check passes) posts Corvid's ids to the
// page actions, under Pellworth's slug (where the ids must not resolve) and under Corvid's
// (where the member is no member). Either way: refused, and nothing changes in the database,
// not even an audit row.
describe("another organisation's ids in page actions", () => {
  const suffix = uniqueSuffix();
  const corvid = { orgId: "", viewerMemberId: "", invitationId: "", tokenId: "", modelId: "", siteId: "" };
  const pellworth = { orgId: "", modelId: "", siteId: "" };

  const orgId = async (slug: string) => (await db().select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, slug)))[0]!.id;
  const first = async <T>(rows: Promise<T[]>) => (await rows)[0]!;

  beforeAll(async () => {
    corvid.orgId = await orgId("corvid");
    pellworth.orgId = await orgId("pellworth");
    corvid.viewerMemberId = (await memberIdOf("viewer@corvid.example")).id;
    const inviter = await first(db().select({ id: user.id }).from(user).where(eq(user.email, "owner@corvid.example")));
    corvid.invitationId = crypto.randomUUID();
    await db().insert(invitation).values({ id: corvid.invitationId, organizationId: corvid.orgId, email: `invitee-${suffix}@test.example`, role: "viewer", status: "pending", expiresAt: new Date(Date.now() + 86_400_000), inviterId: inviter.id });
    const tokenName = `Cross-organisation ${suffix}`;
    expect((await postForm("/o/corvid/developer", { intent: "create-token", name: tokenName, scope: "read" }, corvidOwner)).status).toBe(200);
    corvid.tokenId = (await first(db().select({ id: apiToken.id }).from(apiToken).where(and(eq(apiToken.organisationId, corvid.orgId), eq(apiToken.name, tokenName))))).id;
    for (const [slug, into] of [["corvid", corvid], ["pellworth", pellworth]] as const) {
      into.modelId = (await first(db().select({ id: machineModel.id }).from(machineModel).innerJoin(organisation, eq(organisation.id, machineModel.organisationId)).where(eq(organisation.slug, slug)))).id;
      into.siteId = (await first(db().select({ id: site.id }).from(site).innerJoin(organisation, eq(organisation.id, site.organisationId)).where(eq(organisation.slug, slug)))).id;
    }
  });

  afterAll(async () => {
    await db().delete(invitation).where(eq(invitation.id, corvid.invitationId));
    await db().delete(apiToken).where(and(eq(apiToken.organisationId, corvid.orgId), eq(apiToken.id, corvid.tokenId)));
  });

  /** Both organisations' audit trails, and the rows a forged request is after. */
  async function snapshot(rows: () => Promise<unknown>) {
    const audit = await db().select().from(auditEvent).where(inArray(auditEvent.organisationId, [corvid.orgId, pellworth.orgId])).orderBy(asc(auditEvent.id));
    return { rows: await rows(), audit };
  }

  const memberRow = () => db().select().from(member).where(eq(member.id, corvid.viewerMemberId));
  const invitationRow = () => db().select().from(invitation).where(eq(invitation.id, corvid.invitationId));
  const tokenRow = () => db().select().from(apiToken).where(eq(apiToken.id, corvid.tokenId));
  const machinesWithSerial = () => db().select().from(machine).where(eq(machine.serial, `XORG-${suffix}`));

  // [what, page, form fields, status under Pellworth's own slug, rows to compare]
  const forgeries: [string, string, () => Record<string, string>, number, () => Promise<unknown>][] = [
    ["change a Corvid member's role", "team", () => ({ intent: "change-role", memberId: corvid.viewerMemberId, role: "admin" }), 404, memberRow],
    ["remove a Corvid member", "team", () => ({ intent: "remove", id: corvid.viewerMemberId }), 404, memberRow],
    ["revoke a Corvid invitation", "team", () => ({ intent: "revoke", id: corvid.invitationId }), 404, invitationRow],
    ["resend a Corvid invitation", "team", () => ({ intent: "resend", id: corvid.invitationId }), 404, invitationRow],
    ["revoke a Corvid API token", "developer", () => ({ intent: "revoke-token", id: corvid.tokenId }), 404, tokenRow],
    ["register a machine with Corvid's model and site", "machines/new", () => ({ serial: `XORG-${suffix}`, modelId: corvid.modelId, siteId: corvid.siteId }), 400, machinesWithSerial],
    ["register a machine at a Corvid site", "machines/new", () => ({ serial: `XORG-${suffix}`, modelId: pellworth.modelId, siteId: corvid.siteId }), 400, machinesWithSerial],
    ["register a machine of a Corvid model", "machines/new", () => ({ serial: `XORG-${suffix}`, modelId: corvid.modelId, siteId: pellworth.siteId }), 400, machinesWithSerial],
  ];

  it("starts from rows that exist", async () => {
    expect(await memberRow()).toMatchObject([{ role: "viewer" }]);
    expect(await invitationRow()).toMatchObject([{ status: "pending" }]);
    expect(await tokenRow()).toMatchObject([{ revokedAt: null }]);
    expect(await machinesWithSerial()).toEqual([]);
  });

  describe.each([
    ["Pellworth's", "pellworth"],
    ["Corvid's", "corvid"],
  ])("under %s slug", (_, slug) => {
    it.each(forgeries)("refuses to %s and changes nothing", async (_what, page, fields, ownSlugStatus, rows) => {
      const before = await snapshot(rows);
      const response = await postForm(`/o/${slug}/${page}`, fields(), outsider);
      expect(response.status).toBe(slug === "corvid" ? 404 : ownSlugStatus);
      expect(await snapshot(rows)).toEqual(before);
    });
  });
});
