// Bulk registration from CSV, the database side: load what the rows are matched against
// (this organisation only), then register every accepted row in ONE transaction, so a
// failure half-way leaves nothing behind. Parsing and matching live in ~/lib/fleet/machine-import.
import { DomainError } from "~/lib/errors";
import { and, eq, inArray } from "drizzle-orm";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { readLimitedBytes } from "~/.server/http/body";
import { machine } from "~/.server/db/schema";
import { MAX_IMPORT_BYTES, matchImportRows, parseMachineImport, type ImportMode, type ReadyRow, type RejectedRow } from "~/lib/fleet/machine-import";

import { registerMachine } from "./machines";
import { FirmwareSchema, SerialSchema } from "~/lib/fleet/schemas";
import { listRegistryOptions } from "./registry";
import type { SiteScope } from "./scope";

export type ImportedMachine = { row: number; serial: string; machineId: string; enrolmentCode: string; enrolmentCodeExpiresAt: string };

export type MachineImportReport = {
  mode: ImportMode;
  /** imported: rows were written; refused: all-or-nothing met a bad row; checked: dry run; nothing: no valid row. */
  outcome: "imported" | "refused" | "checked" | "nothing";
  rowCount: number;
  imported: ImportedMachine[];
  rejected: RejectedRow[];
  /** Rows that pass every check (what a check run would import). */
  ready: { row: number; serial: string; model: string; site: string }[];
};

async function findTakenSerials(db: Db, organisationId: string, serials: string[]): Promise<Set<string>> {
  const taken = new Set<string>();
  // Chunks keep the parameter list well under PostgreSQL's limit.
  for (let i = 0; i < serials.length; i += 500) {
    const chunk = serials.slice(i, i + 500);
    const rows = await db.select({ serial: machine.serial }).from(machine).where(and(eq(machine.organisationId, organisationId), inArray(machine.serial, chunk)));
    for (const r of rows) taken.add(r.serial);
  }
  return taken;
}

/** Check a CSV of machines and, unless it is a check run or refused, register the valid rows in one transaction. */
/**
 * `beforeRegister` runs with the number of rows about to be registered, before anything is
 * written (billing refuses new machines there: app/.server/billing/enforce.ts).
 */
export async function importMachinesFromCsv(db: Db, { scope, actor, text, mode, beforeRegister }: { scope: SiteScope; actor: string; text: string; mode: ImportMode; beforeRegister?: (adding: number) => Promise<void> }): Promise<MachineImportReport> {
  const organisationId = scope.organisationId;
  const parsed = parseMachineImport(text, { serial: SerialSchema, firmware: FirmwareSchema });
  if (!parsed.ok) throw new DomainError(parsed.code, parsed.message, { status: 400 });

  const options = await listRegistryOptions(db, scope);
  const takenSerials = await findTakenSerials(db, organisationId, parsed.rows.map((r) => r.serial));
  const matched = matchImportRows(parsed.rows, { models: options.models, sites: options.sites, takenSerials });
  const rejected = [...parsed.rejected, ...matched.rejected].sort((a, b) => a.row - b.row);
  const rowCount = parsed.rows.length + parsed.rejected.length;
  const ready = matched.ready.map((r) => ({ row: r.row, serial: r.serial, model: r.modelName, site: r.siteLabel }));
  const base = { mode, rowCount, rejected, ready };

  if (mode === "check") return { ...base, outcome: "checked", imported: [] };
  if (mode === "all-or-nothing" && rejected.length > 0) return { ...base, outcome: "refused", imported: [] };
  if (matched.ready.length === 0) return { ...base, outcome: "nothing", imported: [] };

  await beforeRegister?.(matched.ready.length);
  const imported = await db.transaction((tx) => registerReadyRows(tx, { organisationId, actor, rows: matched.ready, mode, skipped: rejected.length }));
  return { ...base, outcome: "imported", imported };
}

async function registerReadyRows(tx: Db, { organisationId, actor, rows, mode, skipped }: { organisationId: string; actor: string; rows: ReadyRow[]; mode: ImportMode; skipped: number }) {
  const imported: ImportedMachine[] = [];
  for (const row of rows) {
    try {
      const created = await registerMachine(tx, { organisationId, actor, input: { serial: row.serial, modelId: row.modelId, siteId: row.siteId, firmware: row.firmware } });
      imported.push({ row: row.row, serial: created.machine.serial, machineId: created.machine.id, enrolmentCode: created.enrolmentCode.code, enrolmentCodeExpiresAt: created.enrolmentCode.expiresAt.toISOString() });
    } catch (error) {
      // Someone registered the serial (or removed the site) since the check: throwing rolls
      // the whole transaction back, so the file can simply be sent again.
      if (error instanceof DomainError) {
        throw new DomainError(error.code, `Row ${row.row}: ${error.message} It changed while the file was being imported; nothing was imported. Send the file again.`, { status: 409 });
      }
      throw error;
    }
  }
  await recordAudit(tx, { organisationId, actor, action: "machines.imported", targetType: "organisation", targetId: organisationId, detail: { mode, imported: imported.length, skipped } });
  return imported;
}

// ---- Reading the upload -------------------------------------------------------------------

/** Multipart framing and the mode field add a little to the file itself. */
const MULTIPART_ALLOWANCE = 64 * 1024;

export type ImportUpload =
  | { ok: true; text: string; mode: string | null }
  | { ok: false; status: 400 | 413 | 415; code: string; message: string };

const tooLarge = { ok: false, status: 413, code: "payload_too_large", message: `The file is larger than ${MAX_IMPORT_BYTES / 1024 / 1024} MB; split it into smaller files.` } as const;

/**
 * The CSV of an upload: multipart with a `file` (and `mode`) field, or a text/csv body whose
 * mode is in the query. The body is read at most up to the limit, whatever it claims to be.
 */
export async function readImportUpload(request: Request): Promise<ImportUpload> {
  const type = request.headers.get("content-type") ?? "";
  const queryMode = new URL(request.url).searchParams.get("mode");
  if (/^text\/(csv|plain)\b/i.test(type)) {
    const bytes = await readLimitedBytes(request, MAX_IMPORT_BYTES);
    if (!bytes) return tooLarge;
    return { ok: true, text: Buffer.from(bytes).toString("utf8"), mode: queryMode };
  }
  if (!/^multipart\/form-data\b/i.test(type)) {
    return { ok: false, status: 415, code: "unsupported_media_type", message: "Send the CSV as multipart/form-data (a `file` field) or as a text/csv body." };
  }
  const bytes = await readLimitedBytes(request, MAX_IMPORT_BYTES + MULTIPART_ALLOWANCE);
  if (!bytes) return tooLarge;
  let form: FormData;
  try {
    form = await new Request(request.url, { method: "POST", headers: { "content-type": type }, body: new Uint8Array(bytes) }).formData();
  } catch {
    return { ok: false, status: 400, code: "invalid_multipart", message: "The upload could not be read as multipart form data." };
  }
  const file = form.get("file");
  if (!(file instanceof File) || (file.size === 0 && file.name === "")) return { ok: false, status: 400, code: "missing_file", message: "Choose a CSV file to import." };
  if (file.size > MAX_IMPORT_BYTES) return tooLarge;
  const mode = form.get("mode");
  return { ok: true, text: await file.text(), mode: typeof mode === "string" ? mode : queryMode };
}
