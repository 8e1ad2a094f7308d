// One request path for every /api/v1/compute/* route: authenticate, read, validate, compute.
import type { z } from "zod";
import { bearerSecret, findApiToken } from "~/.server/auth/api-tokens";
import { getSessionUser } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { apiError, invalidRequest, readJson } from "~/.server/http/api";
import { ControlInputError } from "~/lib/control";

export const COMPUTE_JSON_LIMIT = 16 * 1024 * 1024;

/**
 * Any signed-in user, or any live API token of any organisation and scope, may compute;
 * nothing here belongs to an organisation. A bearer header is never backed by the cookie.
 */
export async function requireComputeCaller(request: Request): Promise<Response | null> {
  const secret = bearerSecret(request);
  if (secret !== null) {
    const token = await findApiToken(getDb(), secret);
    return token ? null : apiError(401, "invalid_token", "The API token is not valid or has been revoked.");
  }
  const user = await getSessionUser(request);
  if (!user) return apiError(401, "unauthenticated", "Sign in, or send an API token, to use the compute API.");
  return null;
}

export function computeFailure(error: unknown): Response {
  if (error instanceof ControlInputError) {
    return apiError(400, error.code, `${error.field}: ${error.message.replace(/^[^:]*:\s*/, "")}`, [{ path: error.field.split("."), message: error.message }]);
  }
  const message = error instanceof Error ? error.message : String(error);
  return apiError(422, "computation_failed", `The computation could not be completed: ${message}`);
}

export function answerWith<S extends z.ZodType>(schema: S, value: unknown, answer: (request: z.infer<S>) => unknown): Response {
  const parsed = schema.safeParse(value);
  if (!parsed.success) return invalidRequest(parsed.error);
  try {
    return Response.json(answer(parsed.data));
  } catch (error) {
    return computeFailure(error);
  }
}

export async function handleCompute<S extends z.ZodType>(request: Request, schema: S, answer: (request: z.infer<S>) => unknown): Promise<Response> {
  if (request.method !== "POST") return apiError(405, "method_not_allowed", "Use POST.", undefined, { allow: "POST" });
  const refused = await requireComputeCaller(request);
  if (refused) return refused;
  const body = await readJson(request, COMPUTE_JSON_LIMIT);
  if (!body.ok) return body.response;
  return answerWith(schema, body.value, answer);
}

export function methodNotAllowed(): Response {
  return apiError(405, "method_not_allowed", "Use POST.", undefined, { allow: "POST" });
}
