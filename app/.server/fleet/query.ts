// Query-string parsing shared by the management API's list routes.

/** The first value of each query parameter (repeated parameters do not widen a filter). */
export function searchParams(request: Request): Record<string, string> {
  const out: Record<string, string> = {};
  for (const [key, value] of new URL(request.url).searchParams) if (!(key in out)) out[key] = value;
  return out;
}
