import Papa from "papaparse";
import { describe, expect, it } from "vitest";
import { toCsv } from "./csv";

describe("toCsv", () => {
  it.each(["=HYPERLINK(\"http://x\")", "+1+1", "-2+3", "@SUM(A1)", "\tcmd", "\rcmd"])("neutralises a cell starting a formula: %j", (cell) => {
    const csv = toCsv(["name"], [[cell]]);
    const [, row] = Papa.parse<string[]>(csv.trim()).data;
    expect(row[0]!.startsWith("'")).toBe(true);
    expect(row[0]!.slice(1)).toBe(cell);
  });

  it("quotes commas, quotes and line breaks and keeps ordinary cells as they are", () => {
    expect(toCsv(["a", "b"], [["Halden, North", 'say "hi"'], ["plain", "1.0.0"]])).toBe('a,b\r\n"Halden, North","say ""hi"""\r\nplain,1.0.0\r\n');
  });
});
