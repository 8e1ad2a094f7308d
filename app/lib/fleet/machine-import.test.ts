import { describe, expect, it } from "vitest";
import { FirmwareSchema, SerialSchema } from "./schemas";
import { enrolmentCodesCsv, matchImportRows, MAX_IMPORT_ROWS, parseMachineImport, type ImportLookups } from "./machine-import";

const rules = { serial: SerialSchema, firmware: FirmwareSchema };
const parse = (text: string) => parseMachineImport(text, rules);

const MODEL = "0a1b2c3d-0000-4000-8000-000000000001";
const SITE_A = "0a1b2c3d-0000-4000-8000-0000000000a1";
const SITE_B = "0a1b2c3d-0000-4000-8000-0000000000b2";
const SITE_C = "0a1b2c3d-0000-4000-8000-0000000000c3";
const lookups: ImportLookups = {
  models: [{ id: MODEL, name: "Twin-screw 60" }],
  sites: [
    { id: SITE_A, name: "North hall", customerName: "Alder Foods" },
    { id: SITE_B, name: "Line 2", customerName: "Alder Foods" },
    { id: SITE_C, name: "Line 2", customerName: "Brook Dairy" },
  ],
  takenSerials: new Set(["OLD-1"]),
};

function rowsOf(text: string) {
  const parsed = parse(text);
  if (!parsed.ok) throw new Error(parsed.message);
  return parsed;
}

describe("parseMachineImport: the file as a whole", () => {
  it.each([
    ["", "empty_file", /empty/],
    ["\n\n", "empty_file", /empty/],
    ["serial,model,site\n", "empty_file", /no machine rows/],
    ["A-1,Twin-screw 60,North hall\n", "invalid_header", /Row 1: the first row must be the header serial,model,site,firmware.*no such header/],
    ["serial,model\nA-1,x\n", "invalid_header", /missing site/],
    ["serial,model,site,colour\nA-1,x,y,red\n", "invalid_header", /unknown column "colour"/],
    ["serial,model,site,serial\nA-1,x,y,z\n", "invalid_header", /serial is named twice/],
  ])("%j → %s", (text, code, message) => {
    const parsed = parse(text);
    expect(parsed.ok).toBe(false);
    if (!parsed.ok) {
      expect(parsed.code).toBe(code);
      expect(parsed.message).toMatch(message);
    }
  });

  it("takes at most the row limit", () => {
    const body = (n: number) => ["serial,model,site", ...Array.from({ length: n }, (_, i) => `S-${i},m,s`)].join("\n");
    expect(rowsOf(body(MAX_IMPORT_ROWS)).rows).toHaveLength(MAX_IMPORT_ROWS);
    const over = parse(body(MAX_IMPORT_ROWS + 1));
    expect(over.ok || over.code).toBe("too_many_rows");
  });

  it("reads any column order, a byte-order mark, CRLF, semicolons and a missing firmware column", () => {
    expect(rowsOf("\uFEFFSite;Serial;Model\r\nNorth hall;A-1;Twin-screw 60\r\n").rows).toEqual([{ row: 2, serial: "A-1", model: "Twin-screw 60", site: "North hall", firmware: "" }]);
  });
});

describe("parseMachineImport: row numbers and row shape", () => {
  it("numbers rows by line, header = 1, through blank lines and quoted line breaks", () => {
    const parsed = rowsOf('serial,model,site,firmware\nA-1,m,s,\n\nA-2,"two\nlines",s,\nA-3,m,s,2.0\n');
    expect(parsed.rows.map((r) => [r.row, r.serial])).toEqual([
      [2, "A-1"],
      [4, "A-2"],
      [6, "A-3"],
    ]);
  });

  it.each([
    [",m,s,", "invalid_serial", "Row 2: serial is empty"],
    ["X 1; drop,m,s,", "invalid_serial", 'Row 2: serial "X 1; drop" is not valid: Use letters, digits'],
    [`${"x".repeat(65)},m,s,`, "invalid_serial", "at most 64 characters"],
    [`A-1,m,s,${"9".repeat(65)}`, "invalid_firmware", "Row 2: firmware"],
    ["A-1,m,s,1.0,extra", "too_many_cells", "Row 2: has 5 cells but the header names 4 columns"],
  ])("%j is refused as %s", (line, code, message) => {
    const parsed = rowsOf(`serial,model,site,firmware\n${line}\n`);
    expect(parsed.rows).toEqual([]);
    expect(parsed.rejected).toHaveLength(1);
    expect(parsed.rejected[0]).toMatchObject({ row: 2, code });
    expect(parsed.rejected[0]!.message).toContain(message);
  });

  it("refuses every copy of a serial that appears twice in the file", () => {
    const parsed = rowsOf("serial,model,site\nA-1,m,s\nB-1,m,s\nA-1,m,s\n");
    expect(parsed.rows.map((r) => r.serial)).toEqual(["B-1"]);
    expect(parsed.rejected.map((r) => [r.row, r.code])).toEqual([
      [2, "duplicate_in_file"],
      [4, "duplicate_in_file"],
    ]);
    expect(parsed.rejected[0]!.message).toBe("Row 2: serial A-1 appears more than once in the file (rows 2, 4).");
  });

  it("trims cells and keeps serials case-sensitive, as the database does", () => {
    expect(rowsOf("serial,model,site\n  a-1 , m , s \nA-1,m,s\n").rows.map((r) => r.serial)).toEqual(["a-1", "A-1"]);
  });
});

describe("matchImportRows", () => {
  const match = (lines: string[]) => matchImportRows(rowsOf(["serial,model,site,firmware", ...lines].join("\n")).rows, lookups);

  it("matches models and sites by name, by name ignoring case, by id and as Customer: Site", () => {
    const { ready, rejected } = match([
      "A-1,Twin-screw 60,North hall,1.4.2",
      `A-2,twin-screw 60,north hall,`,
      `A-3,${MODEL},${SITE_B.toUpperCase()},`,
      "A-4,Twin-screw 60,Brook Dairy: Line 2,",
    ]);
    expect(rejected).toEqual([]);
    expect(ready.map((r) => [r.row, r.siteId, r.firmware])).toEqual([
      [2, SITE_A, "1.4.2"],
      [3, SITE_A, undefined],
      [4, SITE_B, undefined],
      [5, SITE_C, undefined],
    ]);
    expect(ready[0]).toMatchObject({ modelId: MODEL, modelName: "Twin-screw 60", siteLabel: "Alder Foods: North hall" });
  });

  it.each([
    ["OLD-1,Twin-screw 60,North hall,", "serial_taken", "Row 2: serial OLD-1 is already registered in this organisation."],
    ["A-1,,North hall,", "missing_model", "Row 2: model is empty"],
    ["A-1,Kiln 9,North hall,", "unknown_model", 'Row 2: unknown model "Kiln 9"'],
    ["A-1,Twin-screw 60,,", "missing_site", "Row 2: site is empty"],
    ["A-1,Twin-screw 60,South hall,", "unknown_site", 'Row 2: unknown site "South hall"'],
    ["A-1,Twin-screw 60,0a1b2c3d-0000-4000-8000-0000000000ff,", "unknown_site", "unknown site"],
    ["A-1,Twin-screw 60,Line 2,", "ambiguous_site", 'sites of Alder Foods and Brook Dairy; write it as "Alder Foods: Line 2"'],
  ])("%j → %s", (line, code, message) => {
    const { ready, rejected } = match([line]);
    expect(ready).toEqual([]);
    expect(rejected).toEqual([{ row: 2, serial: line.split(",")[0], code, message: expect.stringContaining(message) }]);
  });

  it("names row 17 of a 20-row file with an unknown site", () => {
    const lines = Array.from({ length: 20 }, (_, i) => `M-${i + 2},Twin-screw 60,${i + 2 === 17 ? "Nowhere" : "North hall"},`);
    const { ready, rejected } = match(lines);
    expect(ready).toHaveLength(19);
    expect(rejected.map((r) => r.message)).toEqual(['Row 17: unknown site "Nowhere"; no site of this organisation has that name or id.']);
  });
});

describe("enrolmentCodesCsv", () => {
  it("writes serial,enrolmentCode with quoting where a cell needs it", () => {
    expect(enrolmentCodesCsv([{ serial: "A-1", enrolmentCode: "FB-AAAAA-BBBBB-CCCCC-DDDDD" }, { serial: 'Q"1', enrolmentCode: "FB-X" }])).toBe(
      'serial,enrolmentCode\r\nA-1,FB-AAAAA-BBBBB-CCCCC-DDDDD\r\n"Q""1",FB-X\r\n',
    );
  });
});
