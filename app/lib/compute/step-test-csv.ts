// Step-test CSV: a header row naming the columns t, u and y (any order, other columns
// ignored), then one sample per row. Pure, so the bench page checks a file before upload.
import Papa from "papaparse";
import { MAX_SAMPLES } from "./schemas";

export const MAX_CSV_BYTES = 5 * 1024 * 1024;

export type StepTestCsv = { ok: true; samples: { t: number[]; u: number[]; y: number[] } } | { ok: false; message: string };

export function parseStepTestCsv(text: string): StepTestCsv {
  const parsed = Papa.parse<string[]>(text.replace(/^\uFEFF/, ""), { skipEmptyLines: "greedy", delimiter: "" });
  const rows = parsed.data;
  if (rows.length === 0) return { ok: false, message: "The file is empty." };
  const header = rows[0]!.map((h) => h.trim().toLowerCase());
  const column = { t: header.indexOf("t"), u: header.indexOf("u"), y: header.indexOf("y") };
  const missing = (["t", "u", "y"] as const).filter((c) => column[c] < 0);
  if (missing.length) {
    return { ok: false, message: `The header row must name the columns t, u and y; missing ${missing.join(", ")}.` };
  }
  const count = rows.length - 1;
  if (count > MAX_SAMPLES) return { ok: false, message: `The file has ${count} samples; at most ${MAX_SAMPLES}.` };
  const samples = { t: new Array<number>(count), u: new Array<number>(count), y: new Array<number>(count) };
  for (let i = 1; i < rows.length; i++) {
    const row = rows[i]!;
    for (const c of ["t", "u", "y"] as const) {
      const cell = row[column[c]];
      const value = cell === undefined || cell.trim() === "" ? Number.NaN : Number(cell);
      if (!Number.isFinite(value)) return { ok: false, message: `Row ${i + 1}: ${c} is ${cell === undefined || cell.trim() === "" ? "empty" : `"${cell}", not a number`}.` };
      samples[c][i - 1] = value;
    }
  }
  return { ok: true, samples };
}
