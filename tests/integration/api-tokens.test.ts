// Organisation API tokens over HTTP: issued on the developer page and shown once, honoured by
// the management and compute APIs within their scope and organisation, refused once revoked.
import { eq, sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { hashApiToken } from "~/.server/auth/api-tokens";
import { apiToken } from "~/.server/db/schema";
import { createTeam, createTestFleet, uniqueSuffix } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, get, postForm, signIn, type Session } from "../support/http";

const SECRET = /fbk_[A-Za-z0-9_-]{43}/g;

let owner: Session;
let engineer: Session;

/** Create a token through the page the way a browser without JavaScript would. */
async function createTokenOnPage(slug: string, session: Session, name: string, scope: "read" | "write") {
  const response = await postForm(`/o/${slug}/developer`, { intent: "create-token", name, scope }, session);
  expect(response.status).toBe(200);
  const html = await response.text();
  const secrets = [...new Set(html.match(SECRET) ?? [])];
  expect(secrets).toHaveLength(1);
  return secrets[0]!;
}

function withToken(token: string, path: string, init: RequestInit = {}) {
  return fetch(`${APP_URL}${path}`, { ...init, redirect: "manual", headers: { authorization: `Bearer ${token}`, ...(init.body ? { "content-type": "application/json" } : {}), ...init.headers } });
}

async function tokenId(secret: string) {
  const [row] = await db().select({ id: apiToken.id }).from(apiToken).where(eq(apiToken.tokenHash, hashApiToken(secret)));
  return row!.id;
}

let readToken: string;

beforeAll(async () => {
  owner = await signIn("owner@corvid.example");
  engineer = await signIn("engineer@corvid.example");
  readToken = await createTokenOnPage("corvid", owner, `Read ${uniqueSuffix()}`, "read");
});
afterAll(closeDb);

describe("issuing tokens on the developer page", () => {
  it("shows the secret once; afterwards the list has only its prefix", async () => {
    const page = await (await get("/o/corvid/developer", owner)).text();
    expect(page).not.toContain(readToken);
    expect(page.match(SECRET)).toBeNull();
    expect(page).toContain(`fbk_${readToken.slice(4, 12)}`);
    expect(page).toContain("Create token");
  });

  it("keeps only the hash in the database, and audits the creation", async () => {
    const like = `%${readToken}%`;
    const tokens = await db().execute<{ n: number }>(sql`select count(*)::int as n from api_token t where row_to_json(t)::text like ${like}`);
    expect(tokens.rows[0].n).toBe(0);
    const audit = await db().execute<{ n: number }>(sql`select count(*)::int as n from audit_event e where row_to_json(e)::text like ${like}`);
    expect(audit.rows[0].n).toBe(0);
    const id = await tokenId(readToken);
    const [row] = await db().select().from(apiToken).where(eq(apiToken.id, id));
    expect(row).toMatchObject({ scope: "read", prefix: readToken.slice(4, 12), tokenHash: hashApiToken(readToken), revokedAt: null });
    const events = await db().execute<{ action: string }>(sql`select action from audit_event where target_type = 'api_token' and target_id = ${id}`);
    expect(events.rows.map((e) => e.action)).toEqual(["api_token.created"]);
  });

  it("refuses a nameless token and creates nothing", async () => {
    const before = (await db().select().from(apiToken)).length;
    const response = await postForm("/o/corvid/developer", { intent: "create-token", name: "  ", scope: "admin" }, owner);
    expect(response.status).toBe(400);
    expect((await response.text()).match(SECRET)).toBeNull();
    expect((await db().select().from(apiToken)).length).toBe(before);
  });

  it("lets an engineer see the list but neither create nor revoke", async () => {
    const page = await (await get("/o/corvid/developer", engineer)).text();
    expect(page).toContain("API tokens");
    expect(page).toContain(`fbk_${readToken.slice(4, 12)}`);
    expect(page).not.toContain("Create token");
    expect(page).not.toContain("revoke-token");
    const create = await postForm("/o/corvid/developer", { intent: "create-token", name: "Sneaky", scope: "write" }, engineer);
    expect(create.status).toBe(403);
    expect((await create.text()).match(SECRET)).toBeNull();
    const revoke = await postForm("/o/corvid/developer", { intent: "revoke-token", id: await tokenId(readToken) }, engineer);
    expect(revoke.status).toBe(403);
    const [row] = await db().select().from(apiToken).where(eq(apiToken.tokenHash, hashApiToken(readToken)));
    expect(row!.revokedAt).toBeNull();
  });
});

describe("calling the management API with a token", () => {
  it("lists machines with a read token and records when it was used", async () => {
    const response = await withToken(readToken, "/api/v1/o/corvid/machines");
    expect(response.status).toBe(200);
    const body = await response.json();
    expect(body.items.length).toBeGreaterThan(0);
    expect(body.total).toBeGreaterThan(0);
    const [row] = await db().select().from(apiToken).where(eq(apiToken.tokenHash, hashApiToken(readToken)));
    expect(row!.lastUsedAt).not.toBeNull();
    // A second call within the minute does not write again.
    await withToken(readToken, "/api/v1/o/corvid/sites");
    const [again] = await db().select().from(apiToken).where(eq(apiToken.tokenHash, hashApiToken(readToken)));
    expect(again!.lastUsedAt!.getTime()).toBe(row!.lastUsedAt!.getTime());
  });

  it("refuses writes with a read token (403) and allows them with a write token (201)", async () => {
    const team = await createTeam(db(), ["owner"]);
    const fleet = await createTestFleet(db(), { organisationId: team.organisation.id });
    const teamOwner = await signIn(team.people[0].email);
    const slug = team.organisation.slug;
    const read = await createTokenOnPage(slug, teamOwner, "Dashboards", "read");
    const write = await createTokenOnPage(slug, teamOwner, "ERP sync", "write");
    const machine = { serial: `TOK-${uniqueSuffix()}`, modelId: fleet.model.id, siteId: fleet.sites[0].id };
    const refused = await withToken(read, `/api/v1/o/${slug}/machines`, { method: "POST", body: JSON.stringify(machine) });
    expect(refused.status).toBe(403);
    expect((await refused.json()).error.code).toBe("forbidden");
    // No Origin header: a bearer request carries no ambient credentials, so no CSRF check.
    const created = await withToken(write, `/api/v1/o/${slug}/machines`, { method: "POST", body: JSON.stringify(machine) });
    expect(created.status).toBe(201);
    expect((await created.json()).machine.serial).toBe(machine.serial);
    const events = await db().execute<{ actor: string }>(sql`select actor from audit_event where organisation_id = ${team.organisation.id} and action like 'machine.%'`);
    expect(events.rows.map((e) => e.actor)).toContain(`token:${await tokenId(write)}`);
    // The write token of that team does not reach Corvid either.
    expect((await withToken(write, "/api/v1/o/corvid/machines")).status).toBe(404);
  });

  it("answers 404 for another organisation, as for a non-member", async () => {
    const other = await withToken(readToken, "/api/v1/o/pellworth/machines");
    expect(other.status).toBe(404);
    const missing = await withToken(readToken, "/api/v1/o/no-such-org-here/machines");
    expect(missing.status).toBe(404);
    expect(await other.json()).toEqual(await missing.json());
  });

  it("answers 401 invalid_token for malformed and unknown tokens, without falling back to the cookie", async () => {
    const unknown = `fbk_${Buffer.alloc(32, 7).toString("base64url")}`;
    for (const token of ["fbk_", "fbk_short", `${readToken}x`, unknown, "not-a-token"]) {
      const response = await withToken(token, "/api/v1/o/corvid/machines", { headers: { cookie: owner.cookie } });
      expect(response.status, token).toBe(401);
      expect((await response.json()).error.code).toBe("invalid_token");
    }
  });
});

describe("the compute API", () => {
  it("accepts a token of any organisation", async () => {
    const response = await withToken(readToken, "/api/v1/compute/tune", { method: "POST", body: JSON.stringify({ ultimate: { ku: 8, pu: 3.627599 }, rule: "ziegler-nichols", controller: "pid" }) });
    expect(response.status).toBe(200);
    expect(await response.json()).toBeTruthy();
    const bad = await withToken("fbk_nope", "/api/v1/compute/tune", { method: "POST", body: "{}" });
    expect(bad.status).toBe(401);
  });
});

describe("revoking", () => {
  it("refuses a revoked token everywhere with 401 and audits the revocation", async () => {
    const secret = await createTokenOnPage("corvid", owner, `Short-lived ${uniqueSuffix()}`, "write");
    expect((await withToken(secret, "/api/v1/o/corvid/machines")).status).toBe(200);
    const id = await tokenId(secret);
    const response = await postForm("/o/corvid/developer", { intent: "revoke-token", id }, owner);
    expect(response.status).toBe(200);
    const revoked = await withToken(secret, "/api/v1/o/corvid/machines");
    expect(revoked.status).toBe(401);
    expect((await revoked.json()).error.code).toBe("invalid_token");
    expect((await withToken(secret, "/api/v1/compute/tune", { method: "POST", body: JSON.stringify({ ultimate: { ku: 8, pu: 3.627599 }, rule: "ziegler-nichols", controller: "pid" }) })).status).toBe(401);
    const again = await postForm("/o/corvid/developer", { intent: "revoke-token", id }, owner);
    expect(again.status).toBe(404);
    const events = await db().execute<{ action: string }>(sql`select action from audit_event where target_type = 'api_token' and target_id = ${id} order by created_at`);
    expect(events.rows.map((e) => e.action)).toEqual(["api_token.created", "api_token.revoked"]);
  });
});
