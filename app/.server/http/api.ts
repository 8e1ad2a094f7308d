// JSON answers for resource routes: `{"error": {"code", "message", "issues"?}}` on failure.
import type { z } from "zod";
import { apiError, zodIssues } from "~/.server/device-auth/http";
import { readLimitedText } from "./body";

// One JSON error shape for every resource route.
export { apiError };

/** One sentence naming the first bad field, e.g. "plant.timeConstant: must be greater than 0". */
export function describeIssues(error: z.ZodError): string {
  const issue = error.issues[0];
  if (!issue) return "The request is not valid.";
  const path = issue.path.map(String).join(".");
  const message = issue.code === "unrecognized_keys" ? `unknown field${issue.keys.length > 1 ? "s" : ""} ${issue.keys.join(", ")}` : issue.message;
  return path ? `${path}: ${message}` : message;
}

export function invalidRequest(error: z.ZodError): Response {
  return apiError(400, "invalid_request", describeIssues(error), zodIssues(error));
}

export class BodyTooLargeError extends Error {}

/** Read a request body as text; throws BodyTooLargeError past `limit` bytes. */
export async function readBodyText(request: Request, limit: number): Promise<string> {
  const text = await readLimitedText(request, limit);
  if (text === null) throw new BodyTooLargeError();
  return text;
}

/** Parse a JSON body with a size limit; answers are Responses for the caller to return. */
export async function readJson(request: Request, limit: number): Promise<{ ok: true; value: unknown } | { ok: false; response: Response }> {
  let text: string;
  try {
    text = await readBodyText(request, limit);
  } catch (error) {
    if (error instanceof BodyTooLargeError) return { ok: false, response: apiError(413, "payload_too_large", `The body is larger than ${limit} bytes.`) };
    throw error;
  }
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch {
    return { ok: false, response: apiError(400, "invalid_json", "The body is not valid JSON.") };
  }
}
