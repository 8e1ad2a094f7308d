// Number formatting for the bench (DEVELOPERS.md "Conventions"): gains to 4 significant digits,
// times to 3, shares as whole percent. A value that does not exist shows an en dash.

function significant(value: number, digits: number): string {
  if (value === 0) return "0";
  const abs = Math.abs(value);
  // Plain notation in the everyday range, exponent outside it (1.234e-5 beats 0.00001234).
  if (abs >= 1e-3 && abs < 1e6) {
    const decimals = Math.max(0, digits - 1 - Math.floor(Math.log10(abs)));
    return value.toFixed(Math.min(decimals, 12)).replace(/\.0+$|(\.\d*?)0+$/, "$1");
  }
  return value.toExponential(digits - 1).replace(/\.?0+e/, "e");
}

export function formatNumber(value: number | null | undefined, digits: number): string {
  if (value === null || value === undefined || Number.isNaN(value)) return "–";
  if (!Number.isFinite(value)) return value > 0 ? "∞" : "−∞";
  return significant(value, digits).replace(/^-/, "−");
}

export const formatGain = (value: number | null | undefined) => formatNumber(value, 4);
export const formatTime = (value: number | null | undefined) => formatNumber(value, 3);
export const formatShare = (fraction: number | null | undefined) =>
  fraction === null || fraction === undefined || !Number.isFinite(fraction) ? "–" : `${Math.round(fraction * 100)}`;

/** The same digits as an input's value: plain ASCII minus so the field parses it back. */
export function toInputValue(value: number | null | undefined, digits = 4): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return "";
  return significant(value, digits);
}

/** A typed number, or null for an empty or unreadable field (a comma decimal is accepted). */
export function parseNumber(text: string): number | null {
  const trimmed = text.trim().replace(",", ".").replace("−", "-");
  if (trimmed === "") return null;
  const value = Number(trimmed);
  return Number.isFinite(value) ? value : null;
}
