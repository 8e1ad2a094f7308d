// The loop-health pages' own server rules: health reports (printable page and CSV) keep tenant,
// role and site scope, and a CSV cell cannot carry a formula; page actions refuse roles
// without the capability and other sites' machines.
import Papa from "papaparse";
import { and, asc, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loop, machine } from "~/.server/db/schema";
import { assignSite, createMachine, createTeam, createTestFleet } from "../factories";
import { closeDb, db } from "../support/db";
import { get, postForm, signIn, type Session } from "../support/http";

afterAll(closeDb);

const FORMULA_SERIAL = '=HYPERLINK("http://evil.example/x","open me")';

let slug: string;
let owner: Session, viewer: Session, manager: Session, outsider: Session;
let formulaLoopId: string, formulaMachineId: string, siteA: string, siteB: string, otherSiteMachineId: string, otherSiteLoopId: string;

beforeAll(async () => {
  const team = await createTeam(db(), ["owner", "viewer", "site_manager"]);
  slug = team.organisation.slug;
  const fleet = await createTestFleet(db(), { organisationId: team.organisation.id });
  [siteA, siteB] = fleet.sites.map((s) => s.id);
  const managerPerson = team.people.find((p) => p.role === "site_manager")!;
  await assignSite(db(), { organisationId: team.organisation.id, memberId: managerPerson.memberId, siteId: siteA });
  // A serial no form would accept, written straight into the database: the CSV must still be safe.
  const formula = await createMachine(db(), { organisationId: team.organisation.id, modelId: fleet.model.id, siteId: siteA, serial: FORMULA_SERIAL });
  formulaMachineId = formula.id;
  const loops = (machineId: string) => db().select({ id: loop.id }).from(loop).where(and(eq(loop.organisationId, team.organisation.id), eq(loop.machineId, machineId))).orderBy(asc(loop.key));
  formulaLoopId = (await loops(formula.id))[0]!.id;
  const [other] = await db().select({ id: machine.id }).from(machine).where(and(eq(machine.organisationId, team.organisation.id), eq(machine.siteId, siteB)));
  otherSiteMachineId = other!.id;
  otherSiteLoopId = (await loops(other!.id))[0]!.id;
  const email = (role: string) => team.people.find((p) => p.role === role)!.email;
  [owner, viewer, manager, outsider] = await Promise.all([signIn(email("owner")), signIn(email("viewer")), signIn(email("site_manager")), signIn("owner@pellworth.example")]);
});

function cells(csv: string): string[][] {
  return Papa.parse<string[]>(csv.trim(), { newline: "\r\n" }).data;
}

describe("health reports", () => {
  it("writes a loop's CSV with the formula serial neutralised", async () => {
    const response = await get(`/o/${slug}/reports/loop/${formulaLoopId}/csv`, owner);
    expect(response.status).toBe(200);
    expect(response.headers.get("content-type")).toContain("text/csv");
    expect(response.headers.get("content-disposition")).toMatch(/^attachment; filename="flyball-health_loop_[A-Za-z0-9._-]+\.csv"$/);
    const rows = cells(await response.text());
    expect(rows).toHaveLength(2);
    expect(rows[1][0]).toBe(`'${FORMULA_SERIAL}`);
  });

  it("writes a site's CSV with one row per loop of its machines in service, every serial cell safe", async () => {
    const response = await get(`/o/${slug}/reports/site/${siteA}/csv`, manager);
    expect(response.status).toBe(200);
    const rows = cells(await response.text()).slice(1);
    expect(rows.length).toBeGreaterThanOrEqual(4); // two machines at site A, two loops each
    expect(rows.map((r) => r[0])).toContain(`'${FORMULA_SERIAL}`);
    for (const r of rows) expect(r[0]).not.toMatch(/^[=+\-@\t\r]/);
  });

  it("shows the printable page without the organisation's navigation", async () => {
    const response = await get(`/o/${slug}/reports/loop/${formulaLoopId}`, viewer);
    expect(response.status).toBe(200);
    const html = await response.text();
    expect(html).toContain("Download CSV");
    expect(html).not.toContain('aria-label="Organisation"');
  });

  it.each([
    ["loop", () => otherSiteLoopId],
    ["site", () => siteB],
  ])("answers 404 to a site manager for another site's %s report, page and CSV", async (kind, id) => {
    expect((await get(`/o/${slug}/reports/${kind}/${id()}`, manager)).status).toBe(404);
    expect((await get(`/o/${slug}/reports/${kind}/${id()}/csv`, manager)).status).toBe(404);
  });

  it("answers 404 to another organisation and for ids that are no uuid", async () => {
    expect((await get(`/o/${slug}/reports/loop/${formulaLoopId}/csv`, outsider)).status).toBe(404);
    expect((await get(`/o/pellworth/reports/loop/${formulaLoopId}/csv`, outsider)).status).toBe(404);
    expect((await get(`/o/${slug}/reports/site/not-a-uuid/csv`, owner)).status).toBe(404);
  });
});

describe("page actions", () => {
  it("refuses a retune request from a role that may not ask for one, and for another site's machine", async () => {
    const byViewer = await postForm(`/o/${slug}/machines/${formulaMachineId}`, { intent: "retune", observation: "Zone 1 overshoots" }, viewer);
    expect(byViewer.status).toBe(403);
    const elsewhere = await postForm(`/o/${slug}/machines/${otherSiteMachineId}`, { intent: "retune", observation: "Zone 1 overshoots" }, manager);
    expect(elsewhere.status).toBe(404);
  });

  it("refuses bulk acknowledgement to a viewer", async () => {
    const response = await postForm(`/o/${slug}/findings`, { intent: "acknowledge", ids: crypto.randomUUID() }, viewer);
    expect(response.status).toBe(403);
  });

  it("refuses moving a retune request to a site manager", async () => {
    const response = await postForm(`/o/${slug}/retune-requests`, { id: crypto.randomUUID(), state: "done", comment: "x" }, manager);
    expect(response.status).toBe(403);
  });
});
