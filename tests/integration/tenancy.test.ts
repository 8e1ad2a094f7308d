// Tenant isolation and roles on the server: every page under /o/:slug refuses outsiders,
// and a role without member management cannot change roles by forging a request.
import { and, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { RouteConfigEntry } from "@react-router/dev/routes";
import routes from "~/routes";
import { member, organisation, user } from "~/.server/db/schema";
import { get, postForm, signIn, type Session } from "../support/http";
import { closeDb, db } from "../support/db";

afterAll(closeDb);

/** Every page path under o/:slug in app/routes.ts, with params filled by a placeholder id. */
function organisationPagePaths(): string[] {
  const paths: string[] = [];
  const walk = (entries: RouteConfigEntry[], base: string) => {
    for (const entry of entries) {
      const full = entry.path ? `${base}/${entry.path}` : base;
      if (full.startsWith("/o/:slug")) paths.push(full);
      if (entry.children) walk(entry.children, full);
    }
  };
  walk(routes as RouteConfigEntry[], "");
  return [...new Set(paths)].map((p) => p.replace(/:(?!slug)\w+\??/g, "00000000-0000-4000-8000-000000000000").replace(/\/\*$/, "/x"));
}

let outsider: Session;
let engineer: Session;

beforeAll(async () => {
  outsider = await signIn("owner@pellworth.example");
  engineer = await signIn("engineer@corvid.example");
});

describe("tenant isolation", () => {
  const pages = organisationPagePaths();

  it("finds the organisation pages in the route config", () => {
    expect(pages).toContain("/o/:slug");
    expect(pages).toContain("/o/:slug/team");
  });

  it.each(pages)("a member of another organisation gets 404 for %s", async (page) => {
    const response = await get(page.replace(":slug", "corvid"), outsider);
    expect(response.status).toBe(404);
  });

  it.each(pages)("the same member can open their own organisation's %s or is told it does not exist", async (page) => {
    const response = await get(page.replace(":slug", "pellworth"), outsider);
    expect([200, 404]).toContain(response.status);
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
  async function memberIdOf(email: string) {
    const [row] = await db()
      .select({ id: member.id, role: member.role })
      .from(member)
      .innerJoin(user, eq(user.id, member.userId))
      .innerJoin(organisation, eq(organisation.id, member.organizationId))
      .where(and(eq(user.email, email), eq(organisation.slug, "corvid")));
    return row!;
  }

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
