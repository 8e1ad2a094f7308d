// Number and time formatting for fleet screens (the product's number style, DEVELOPERS.md "Conventions": gains to 4 significant
// digits, times to 3, shares as whole percent).
export function formatSig(value: number | null | undefined, digits = 4): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return "–";
  if (value === 0) return "0";
  return Number(value.toPrecision(digits)).toString();
}

export function formatPercent(fraction: number | null | undefined): string {
  if (fraction === null || fraction === undefined || !Number.isFinite(fraction)) return "–";
  return `${Math.round(fraction * 100)}`;
}

const relative = new Intl.RelativeTimeFormat("en-GB", { numeric: "auto" });

export function formatAgo(iso: string | null | undefined, now = Date.now()): string {
  if (!iso) return "never";
  const seconds = Math.round((new Date(iso).getTime() - now) / 1000);
  const abs = Math.abs(seconds);
  if (abs < 60) return relative.format(seconds, "second");
  if (abs < 3600) return relative.format(Math.round(seconds / 60), "minute");
  if (abs < 86_400) return relative.format(Math.round(seconds / 3600), "hour");
  return relative.format(Math.round(seconds / 86_400), "day");
}

const dateTime = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", hour: "2-digit", minute: "2-digit", timeZone: "UTC" });
export function formatDateTime(iso: string | null | undefined): string {
  return iso ? `${dateTime.format(new Date(iso))} UTC` : "–";
}

/** A value with its unit in a lighter tone. */
export function unitClass(): string {
  return "ml-0.5 text-ink-faint";
}
