import { z } from "zod";

export type FieldErrors = Record<string, string[] | undefined> & { form?: string[] };

/** Parse a submitted form with a schema; failures come back as per-field messages. */
export function parseForm<S extends z.ZodType>(
  schema: S,
  formData: FormData,
): { ok: true; data: z.infer<S> } | { ok: false; errors: FieldErrors } {
  const result = schema.safeParse(Object.fromEntries(formData));
  if (result.success) return { ok: true, data: result.data };
  return { ok: false, errors: z.flattenError(result.error).fieldErrors as FieldErrors };
}
