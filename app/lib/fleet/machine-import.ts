// Bulk registration from a CSV file: reading the file, checking every row's shape, and
// matching rows against what the organisation already has (models, sites, serials), all as
// values in and values out. The server module loads those lookups and does the writing.
//
// Row numbers are line numbers in the file as a spreadsheet shows them (the header is row 1),
// counted from the start of each record so a quoted cell with a line break does not shift
// the rows after it.
import Papa from "papaparse";
import { toCsv } from "~/lib/csv";
import type { z } from "zod";

export const MAX_IMPORT_BYTES = 1024 * 1024;
export const MAX_IMPORT_ROWS = 2000;

export const IMPORT_MODES = ["all-or-nothing", "valid-rows", "check"] as const;
export type ImportMode = (typeof IMPORT_MODES)[number];

export const IMPORT_COLUMNS = ["serial", "model", "site", "firmware"] as const;
const REQUIRED_COLUMNS = ["serial", "model", "site"] as const;
type Column = (typeof IMPORT_COLUMNS)[number];

export type ImportRow = { row: number; serial: string; model: string; site: string; firmware: string };

export type RejectCode =
  | "too_many_cells"
  | "invalid_serial"
  | "duplicate_in_file"
  | "serial_taken"
  | "missing_model"
  | "unknown_model"
  | "ambiguous_model"
  | "missing_site"
  | "unknown_site"
  | "ambiguous_site"
  | "invalid_firmware";

export type RejectedRow = { row: number; serial?: string; code: RejectCode; message: string };

export type ParsedImport = { ok: true; rows: ImportRow[]; rejected: RejectedRow[] } | { ok: false; code: "empty_file" | "invalid_header" | "too_many_rows" | "invalid_csv"; message: string };

/** The field rules of single registration, passed in so this module stays free of server code. */
export type ImportFieldRules = { serial: z.ZodType<string>; firmware: z.ZodType<string> };

const formatCount = (n: number) => n.toLocaleString("en-GB").replace(/,/g, " ");

function describeCell(value: string) {
  return value.length > 40 ? `"${value.slice(0, 40)}…"` : `"${value}"`;
}

/** Read the file and check each row on its own: cells present, serial and firmware well formed, no serial twice. */
export function parseMachineImport(text: string, rules: ImportFieldRules): ParsedImport {
  const normal = text.replace(/^\uFEFF/, "").replace(/\r\n?/g, "\n");
  if (normal.trim() === "") return { ok: false, code: "empty_file", message: "The file is empty. The first row must be the header serial,model,site,firmware." };

  const records: { line: number; cells: string[] }[] = [];
  let line = 1;
  let cursor = 0;
  let tooMany = false;
  Papa.parse<string[]>(normal, {
    delimiter: "", // guess: a comma, or the semicolon some spreadsheets write
    newline: "\n",
    step: (result, parser) => {
      const start = cursor;
      cursor = result.meta.cursor;
      const cells = result.data.map((c) => c.trim());
      if (cells.some((c) => c !== "")) records.push({ line, cells });
      for (let i = start; i < cursor; i++) if (normal.charCodeAt(i) === 10) line++;
      // The header plus the limit, plus one to know the limit was passed.
      if (records.length > MAX_IMPORT_ROWS + 1) {
        tooMany = true;
        parser.abort();
      }
    },
  });
  if (tooMany) return { ok: false, code: "too_many_rows", message: `The file has more than ${formatCount(MAX_IMPORT_ROWS)} machine rows; split it into smaller files.` };

  const [header, ...body] = records;
  if (!header) return { ok: false, code: "empty_file", message: "The file is empty. The first row must be the header serial,model,site,firmware." };
  const names = header.cells.map((c) => c.toLowerCase());
  const missing = REQUIRED_COLUMNS.filter((c) => !names.includes(c));
  if (missing.length) {
    return {
      ok: false,
      code: "invalid_header",
      message: `Row ${header.line}: the first row must be the header serial,model,site,firmware (firmware may be left out); ${missing.length === REQUIRED_COLUMNS.length ? "no such header was found" : `missing ${missing.join(", ")}`}.`,
    };
  }
  const unknown = names.filter((n) => !(IMPORT_COLUMNS as readonly string[]).includes(n));
  if (unknown.length) {
    return { ok: false, code: "invalid_header", message: `Row ${header.line}: unknown column ${unknown.map(describeCell).join(", ")}; the columns are serial, model, site and firmware.` };
  }
  const twice = names.filter((n, i) => names.indexOf(n) !== i);
  if (twice.length) return { ok: false, code: "invalid_header", message: `Row ${header.line}: the column ${twice[0]} is named twice.` };
  if (body.length === 0) return { ok: false, code: "empty_file", message: "The file has a header but no machine rows." };

  const index = Object.fromEntries(IMPORT_COLUMNS.map((c) => [c, names.indexOf(c)])) as Record<Column, number>;
  const cell = (cells: string[], column: Column) => (index[column] < 0 ? "" : (cells[index[column]] ?? ""));

  const rows: ImportRow[] = [];
  const rejected: RejectedRow[] = [];
  const linesOfSerial = new Map<string, number[]>();
  for (const record of body) {
    const row: ImportRow = {
      row: record.line,
      serial: cell(record.cells, "serial"),
      model: cell(record.cells, "model"),
      site: cell(record.cells, "site"),
      firmware: cell(record.cells, "firmware"),
    };
    if (record.cells.length > names.length) {
      rejected.push({ row: row.row, serial: row.serial || undefined, code: "too_many_cells", message: `Row ${row.row}: has ${record.cells.length} cells but the header names ${names.length} columns (is there an unquoted comma?).` });
      continue;
    }
    const serial = rules.serial.safeParse(row.serial);
    if (!serial.success) {
      const reason = row.serial === "" ? "serial is empty" : `serial ${describeCell(row.serial)} is not valid: ${serial.error.issues[0]?.message ?? "check it"}`;
      rejected.push({ row: row.row, serial: row.serial || undefined, code: "invalid_serial", message: `Row ${row.row}: ${reason}` });
      continue;
    }
    row.serial = serial.data;
    if (row.firmware !== "") {
      const firmware = rules.firmware.safeParse(row.firmware);
      if (!firmware.success) {
        rejected.push({ row: row.row, serial: row.serial, code: "invalid_firmware", message: `Row ${row.row}: firmware ${describeCell(row.firmware)} is not valid: ${firmware.error.issues[0]?.message ?? "check it"}` });
        continue;
      }
    }
    linesOfSerial.set(row.serial, [...(linesOfSerial.get(row.serial) ?? []), row.row]);
    rows.push(row);
  }

  // A serial twice in one file: neither copy can be trusted to be the right one.
  const kept: ImportRow[] = [];
  for (const row of rows) {
    const lines = linesOfSerial.get(row.serial)!;
    if (lines.length > 1) {
      rejected.push({ row: row.row, serial: row.serial, code: "duplicate_in_file", message: `Row ${row.row}: serial ${row.serial} appears more than once in the file (rows ${lines.join(", ")}).` });
    } else {
      kept.push(row);
    }
  }
  rejected.sort((a, b) => a.row - b.row);
  return { ok: true, rows: kept, rejected };
}

// ---- Matching against the organisation's registry ---------------------------------------

export type ImportLookups = {
  models: { id: string; name: string }[];
  sites: { id: string; name: string; customerName: string }[];
  /** Serials among the file's that the organisation already has (any status). */
  takenSerials: ReadonlySet<string>;
};

export type ReadyRow = { row: number; serial: string; modelId: string; modelName: string; siteId: string; siteLabel: string; firmware?: string };

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

type Match<T> = { found: T } | { found: null; candidates: T[] };

/** An id, else the exact name, else the name ignoring case; more than one hit is ambiguous. */
function matchByName<T extends { id: string }>(value: string, items: T[], nameOf: (item: T) => string[]): Match<T> {
  if (UUID.test(value)) {
    const byId = items.find((i) => i.id.toLowerCase() === value.toLowerCase());
    return byId ? { found: byId } : { found: null, candidates: [] };
  }
  const exact = items.filter((i) => nameOf(i).includes(value));
  if (exact.length === 1) return { found: exact[0]! };
  if (exact.length > 1) return { found: null, candidates: exact };
  const folded = value.toLowerCase();
  const loose = items.filter((i) => nameOf(i).some((n) => n.toLowerCase() === folded));
  return loose.length === 1 ? { found: loose[0]! } : { found: null, candidates: loose };
}

export const siteLabel = (s: { name: string; customerName: string }) => `${s.customerName}: ${s.name}`;

/**
 * Match each well-formed row to a model and a site of this organisation and refuse serials it
 * already has. Lookups only ever hold the organisation's own rows, so another organisation's
 * site name is simply unknown here.
 */
export function matchImportRows(rows: ImportRow[], lookups: ImportLookups): { ready: ReadyRow[]; rejected: RejectedRow[] } {
  const ready: ReadyRow[] = [];
  const rejected: RejectedRow[] = [];
  for (const row of rows) {
    const reject = (code: RejectCode, reason: string) => rejected.push({ row: row.row, serial: row.serial, code, message: `Row ${row.row}: ${reason}` });
    if (lookups.takenSerials.has(row.serial)) {
      reject("serial_taken", `serial ${row.serial} is already registered in this organisation.`);
      continue;
    }
    if (row.model === "") {
      reject("missing_model", "model is empty; give the machine model's name or id.");
      continue;
    }
    const model = matchByName(row.model, lookups.models, (m) => [m.name]);
    if (!model.found) {
      if (model.candidates.length) reject("ambiguous_model", `model ${describeCell(row.model)} matches ${model.candidates.length} models; use the model's id.`);
      else reject("unknown_model", `unknown model ${describeCell(row.model)}; no machine model of this organisation has that name or id.`);
      continue;
    }
    if (row.site === "") {
      reject("missing_site", "site is empty; give the site's name or id.");
      continue;
    }
    // "Customer: Site" tells apart two customers' sites of the same name.
    const site = matchByName(row.site, lookups.sites, (s) => [s.name, siteLabel(s)]);
    if (!site.found) {
      if (site.candidates.length) {
        reject("ambiguous_site", `site ${describeCell(row.site)} is the name of sites of ${site.candidates.map((s) => s.customerName).join(" and ")}; write it as "${siteLabel(site.candidates[0]!)}" or use the site's id.`);
      } else {
        reject("unknown_site", `unknown site ${describeCell(row.site)}; no site of this organisation has that name or id.`);
      }
      continue;
    }
    ready.push({
      row: row.row,
      serial: row.serial,
      modelId: model.found.id,
      modelName: model.found.name,
      siteId: site.found.id,
      siteLabel: siteLabel(site.found),
      ...(row.firmware ? { firmware: row.firmware } : {}),
    });
  }
  return { ready, rejected };
}

/** The serial,enrolmentCode file a person keeps after an import (built in the browser). */
export function enrolmentCodesCsv(rows: { serial: string; enrolmentCode: string }[]): string {
  return toCsv(["serial", "enrolmentCode"], rows.map((r) => [r.serial, r.enrolmentCode]));
}
