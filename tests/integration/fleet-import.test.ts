// Bulk import of machines from CSV over HTTP, against the demo organisation "corvid": the
// per-row report, all-or-nothing versus valid rows in one transaction, tenant isolation,
// roles, limits. Every serial carries this run's prefix and is removed afterwards, so the
// demo fleet other tests count stays as seeded.
import { and, eq, like, sql } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { auditEvent, machine, organisation } from "~/.server/db/schema";
import { createCustomer, createMachineModel, createOrganisation, createSite, uniqueSuffix } from "../factories";
import { closeDb, db } from "../support/db";
import { APP_URL, get, signIn, type Session } from "../support/http";

const API = "/api/v1/o/corvid/machines/import";
const PAGE = "/o/corvid/machines/import";
const prefix = `IMP-${uniqueSuffix()}`.toUpperCase();
let engineer: Session;
let viewer: Session;
let corvidId: string;
let modelName: string;
let siteName: string;
let otherOrg: { siteName: string; siteId: string; modelName: string };
let existingSerial: string;

type Report = {
  mode: string;
  outcome: string;
  rowCount: number;
  imported: { row: number; serial: string; machineId: string; enrolmentCode: string }[];
  rejected: { row: number; serial?: string; code: string; message: string }[];
  ready: { row: number; serial: string }[];
};

function upload(path: string, csv: string, mode: string | null, session?: Session, headers: Record<string, string> = { origin: APP_URL }) {
  const form = new FormData();
  form.set("file", new Blob([csv], { type: "text/csv" }), "machines.csv");
  if (mode !== null) form.set("mode", mode);
  return fetch(`${APP_URL}${path}`, { method: "POST", redirect: "manual", headers: { ...(session ? { cookie: session.cookie } : {}), ...headers }, body: form });
}

let fileCounter = 0;
/** A header and `count` rows (line numbers 2..count+1) with fresh serials; `patch` edits a row by its line number. */
function csvFile(count: number, patch: (line: number, cells: string[]) => string[] = (_, c) => c) {
  fileCounter += 1;
  const lines = ["serial,model,site,firmware"];
  for (let line = 2; line <= count + 1; line++) lines.push(patch(line, [`${prefix}-F${fileCounter}-${line}`, modelName, siteName, "3.1.0"]).join(","));
  return { text: lines.join("\n") + "\n", serial: (line: number) => `${prefix}-F${fileCounter}-${line}` };
}

async function ourMachines() {
  return db().select({ id: machine.id, serial: machine.serial, createdAt: machine.createdAt }).from(machine).where(and(eq(machine.organisationId, corvidId), like(machine.serial, `${prefix}%`)));
}

beforeAll(async () => {
  engineer = await signIn("engineer@corvid.example");
  viewer = await signIn("viewer@corvid.example");
  const [corvid] = await db().select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, "corvid"));
  corvidId = corvid!.id;
  const sites = (await (await get("/api/v1/o/corvid/sites?pageSize=200", engineer)).json()) as { items: { id: string; name: string }[] };
  // A site name only one of corvid's customers uses, so it is not ambiguous.
  siteName = sites.items.find((s) => sites.items.filter((t) => t.name === s.name).length === 1)!.name;
  const models = (await (await get("/api/v1/o/corvid/models", engineer)).json()) as { items: { name: string }[] };
  modelName = models.items[0]!.name;
  const [seeded] = await db().select({ serial: machine.serial }).from(machine).where(eq(machine.organisationId, corvidId)).limit(1);
  existingSerial = seeded!.serial;
  // Another organisation with a site and a model corvid does not have.
  const suffix = uniqueSuffix();
  const other = await createOrganisation(db(), { name: `Import Other ${suffix}`, slug: `import-other-${suffix}` });
  const buyer = await createCustomer(db(), { organisationId: other.id, name: `Buyer ${suffix}` });
  const site = await createSite(db(), { organisationId: other.id, customerId: buyer.id, name: `Far Hall ${suffix}` });
  const model = await createMachineModel(db(), { organisationId: other.id, name: `Other Model ${suffix}` });
  otherOrg = { siteName: site.name, siteId: site.id, modelName: model.name };
});

afterAll(async () => {
  await db().delete(machine).where(and(eq(machine.organisationId, corvidId), like(machine.serial, `${prefix}%`)));
  await closeDb();
});

describe("a file of 20 machine rows whose row 17 names an unknown site", () => {
  it("all or nothing: imports nothing and names row 17 with the site", async () => {
    const file = csvFile(20, (line, c) => (line === 17 ? [c[0]!, c[1]!, "Atlantis Works", c[3]!] : c));
    const response = await upload(API, file.text, "all-or-nothing", engineer);
    expect(response.status).toBe(422);
    const report = (await response.json()) as Report;
    expect(report).toMatchObject({ mode: "all-or-nothing", outcome: "refused", rowCount: 20, imported: [] });
    expect(report.rejected).toEqual([{ row: 17, serial: file.serial(17), code: "unknown_site", message: expect.stringMatching(/^Row 17: unknown site "Atlantis Works"/) }]);
    expect(await ourMachines()).toEqual([]);
  });

  it("valid rows: imports the other 19 in one transaction, each with loops and a one-time code", async () => {
    const file = csvFile(20, (line, c) => (line === 17 ? [c[0]!, c[1]!, "Atlantis Works", c[3]!] : c));
    const response = await upload(API, file.text, "valid-rows", engineer);
    expect(response.status).toBe(200);
    const report = (await response.json()) as Report;
    expect(report.outcome).toBe("imported");
    expect(report.imported).toHaveLength(19);
    expect(report.imported.map((m) => m.row)).toEqual([2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 18, 19, 20, 21]);
    expect(report.rejected.map((r) => r.row)).toEqual([17]);
    for (const m of report.imported) expect(m.enrolmentCode).toMatch(/^FB-[A-Z0-9]{5}(-[A-Z0-9]{5}){3}$/);

    const rows = (await ourMachines()).filter((m) => m.serial.startsWith(file.serial(2).replace(/-2$/, "-")));
    expect(rows).toHaveLength(19);
    // now() is the transaction's start: one created_at for all of them means one transaction.
    expect(new Set(rows.map((m) => m.createdAt.getTime())).size).toBe(1);
    const loops = await db().execute<{ n: number }>(sql`select count(*)::int as n from loop where organisation_id = ${corvidId} and machine_id in (${sql.join(rows.map((r) => sql`${r.id}::uuid`), sql`, `)})`);
    expect(loops.rows[0]!.n).toBeGreaterThanOrEqual(19);
    const plain = await db().execute<{ n: number }>(sql`select count(*)::int as n from enrolment_code where code_hash in (${sql.join(report.imported.map((m) => sql`${m.enrolmentCode}`), sql`, `)})`);
    expect(plain.rows[0]!.n).toBe(0);
    const audit = await db().select({ detail: auditEvent.detail }).from(auditEvent).where(and(eq(auditEvent.organisationId, corvidId), eq(auditEvent.action, "machines.imported")));
    expect(audit.some((a) => (a.detail as { imported?: number }).imported === 19)).toBe(true);
  });
});

describe("the per-row report", () => {
  it("names serials twice in the file and serials already registered, and a check writes nothing", async () => {
    const dup = `${prefix}-DUP`;
    const text = ["serial,model,site,firmware", `${dup},${modelName},${siteName},`, `${existingSerial},${modelName},${siteName},`, `${dup},${modelName},${siteName},`, `${prefix}-OK1,${modelName},${siteName},`, `bad serial!,${modelName},${siteName},`].join("\n");
    const response = await upload(API, text, "check", engineer);
    expect(response.status).toBe(200);
    const report = (await response.json()) as Report;
    expect(report.outcome).toBe("checked");
    expect(report.rejected.map((r) => [r.row, r.code])).toEqual([
      [2, "duplicate_in_file"],
      [3, "serial_taken"],
      [4, "duplicate_in_file"],
      [6, "invalid_serial"],
    ]);
    expect(report.rejected[0]!.message).toBe(`Row 2: serial ${dup} appears more than once in the file (rows 2, 4).`);
    expect(report.rejected[1]!.message).toBe(`Row 3: serial ${existingSerial} is already registered in this organisation.`);
    expect(report.ready.map((r) => r.serial)).toEqual([`${prefix}-OK1`]);
    expect((await ourMachines()).some((m) => m.serial === `${prefix}-OK1`)).toBe(false);
  });

  it("treats another organisation's site and model as unknown, by name and by id", async () => {
    const text = [
      "serial,model,site",
      `${prefix}-T1,${modelName},${otherOrg.siteName}`,
      `${prefix}-T2,${modelName},${otherOrg.siteId}`,
      `${prefix}-T3,${otherOrg.modelName},${siteName}`,
    ].join("\n");
    const response = await upload(API, text, "valid-rows", engineer);
    const report = (await response.json()) as Report;
    expect(report.outcome).toBe("nothing");
    expect(report.rejected.map((r) => [r.row, r.code])).toEqual([
      [2, "unknown_site"],
      [3, "unknown_site"],
      [4, "unknown_model"],
    ]);
    expect(report.rejected[0]!.message).toContain(`unknown site "${otherOrg.siteName}"`);
    expect((await ourMachines()).filter((m) => m.serial.startsWith(`${prefix}-T`))).toEqual([]);
  });

  it("accepts a text/csv body with ?mode=", async () => {
    const response = await fetch(`${APP_URL}${API}?mode=check`, { method: "POST", headers: { cookie: engineer.cookie, "content-type": "text/csv" }, body: `serial,model,site\n${prefix}-CSV,${modelName},${siteName}\n` });
    expect(response.status).toBe(200);
    expect(((await response.json()) as Report).ready).toEqual([expect.objectContaining({ row: 2, serial: `${prefix}-CSV` })]);
  });
});

describe("refusals", () => {
  it("a viewer gets 403 from the API and the page, and nothing changes", async () => {
    const before = (await db().execute<{ n: number }>(sql`select count(*)::int as n from machine where organisation_id = ${corvidId}`)).rows[0]!.n;
    const file = csvFile(3);
    expect((await upload(API, file.text, "valid-rows", viewer)).status).toBe(403);
    expect((await upload(PAGE, file.text, "valid-rows", viewer)).status).toBe(403);
    expect((await get(PAGE, viewer)).status).toBe(403);
    const after = (await db().execute<{ n: number }>(sql`select count(*)::int as n from machine where organisation_id = ${corvidId}`)).rows[0]!.n;
    expect(after).toBe(before);
  });

  it("answers 413 for a file over 1 MB", async () => {
    const big = `serial,model,site\n${`${prefix}-BIG,${modelName},${siteName}\n`.repeat(Math.ceil((1024 * 1024 + 10) / 40))}`;
    expect(big.length).toBeGreaterThan(1024 * 1024);
    const multipart = await upload(API, big, "check", engineer);
    expect(multipart.status).toBe(413);
    expect(((await multipart.json()) as { error: { code: string } }).error.code).toBe("payload_too_large");
    const plain = await fetch(`${APP_URL}${API}?mode=check`, { method: "POST", headers: { cookie: engineer.cookie, "content-type": "text/csv" }, body: big });
    expect(plain.status).toBe(413);
    expect((await upload(PAGE, big, "check", engineer)).status).toBe(413);
  });

  it("says clearly when the header row is missing", async () => {
    const response = await upload(API, `${prefix}-H1,${modelName},${siteName}\n`, "valid-rows", engineer);
    expect(response.status).toBe(400);
    const body = (await response.json()) as { error: { code: string; message: string } };
    expect(body.error.code).toBe("invalid_header");
    expect(body.error.message).toMatch(/^Row 1: the first row must be the header serial,model,site,firmware/);
  });

  it("refuses a missing mode, more than 2 000 rows, a cross-site upload and a foreign organisation", async () => {
    const file = csvFile(2);
    expect((await upload(API, file.text, null, engineer)).status).toBe(400);
    const many = `serial,model,site\n${Array.from({ length: 2001 }, (_, i) => `${prefix}-N${i},${modelName},${siteName}`).join("\n")}`;
    const tooMany = await upload(API, many, "check", engineer);
    expect(tooMany.status).toBe(400);
    expect(((await tooMany.json()) as { error: { code: string } }).error.code).toBe("too_many_rows");
    expect((await upload(API, file.text, "valid-rows", engineer, { origin: "https://evil.example" })).status).toBe(403);
    expect((await upload(API, file.text, "valid-rows", engineer, {})).status).toBe(403);
    const unsignedJson = await fetch(`${APP_URL}${API}`, { method: "POST", headers: { cookie: engineer.cookie, "content-type": "application/json", origin: APP_URL }, body: "{}" });
    expect(unsignedJson.status).toBe(415);
    expect((await upload("/api/v1/o/pellworth/machines/import", file.text, "valid-rows", engineer)).status).toBe(404);
    expect((await ourMachines()).filter((m) => m.serial.startsWith(file.serial(2).replace(/-2$/, "")))).toEqual([]);
  });
});

describe("the import page without JavaScript", () => {
  it("posts the file as a plain form and shows the report with the codes", async () => {
    const page = await get(PAGE, engineer);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain("Only if every row is valid");
    const file = csvFile(2);
    const response = await upload(PAGE, file.text, "valid-rows", engineer);
    expect(response.status).toBe(200);
    const html = await response.text();
    expect(html).toContain("2 machines imported");
    expect(html).toContain(file.serial(2));
    expect(html).toMatch(/FB-[A-Z0-9]{5}-/);
    expect(html).toContain("Download codes as CSV");

    const refused = await upload(PAGE, csvFile(3, (line, c) => (line === 3 ? [c[0]!, "No Such Model", c[2]!, c[3]!] : c)).text, "all-or-nothing", engineer);
    expect(refused.status).toBe(422);
    const refusedHtml = await refused.text();
    expect(refusedHtml).toContain("Nothing was imported");
    expect(refusedHtml).toContain("unknown model");
  });
});
