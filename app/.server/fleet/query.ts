// Query-string parsing shared by the management API's list routes.
import { z } from "zod";

/** The first value of each query parameter (repeated parameters do not widen a filter). */
export function searchParams(request: Request): Record<string, string> {
  const out: Record<string, string> = {};
  for (const [key, value] of new URL(request.url).searchParams) if (!(key in out)) out[key] = value;
  return out;
}

const blankToUndefined = (v: unknown) => (v === "" || v === null ? undefined : v);

export const optionalId = z.preprocess(blankToUndefined, z.uuid("Must be an id.").optional());

export const PageQuerySchema = z.object({
  page: z.preprocess(blankToUndefined, z.coerce.number().int().min(1).max(100_000).default(1)),
  pageSize: z.preprocess(blankToUndefined, z.coerce.number().int().min(1).max(200).default(50)),
});
