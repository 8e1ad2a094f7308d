// Every CSV the app writes goes through here. Cells that a spreadsheet would run as a formula
// (starting with =, +, -, @, tab or carriage return) are neutralised with a leading quote
// (papaparse's escapeFormulae), so a site or machine name cannot carry a formula into an
// engineer's spreadsheet.
import Papa from "papaparse";

export function toCsv(header: string[], rows: string[][]): string {
  return Papa.unparse({ fields: header, data: rows }, { escapeFormulae: true, newline: "\r\n" }) + "\r\n";
}
