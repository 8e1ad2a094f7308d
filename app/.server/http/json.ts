// The JSON side of every resource route: answers (`jsonResponse`, and errors shaped
// `{"error": {"code", "message", "issues"?}}`), the one JSON body reader, and the method guard.
import type { z } from "zod";
import type { ErrorIssue } from "~/lib/errors";
import { RAW_BODY, readLimitedText } from "./body";

const JSON_HEADERS = { "content-type": "application/json; charset=utf-8", "cache-control": "no-store" };

/** A JSON answer. scripts/serve.js writes its text directly (RAW_BODY) instead of reading the stream. */
export function jsonResponse(body: unknown, status = 200, headers: Record<string, string> = {}): Response {
  const text = JSON.stringify(body);
  const response = new Response(text, { status, headers: { ...JSON_HEADERS, ...headers } });
  Object.defineProperty(response, RAW_BODY, { value: text });
  return response;
}

export type Issue = ErrorIssue;

export function apiError(status: number, code: string, message: string, issues?: Issue[], headers: Record<string, string> = {}): Response {
  return jsonResponse({ error: issues ? { code, message, issues } : { code, message } }, status, headers);
}

export function zodIssues(error: z.ZodError): Issue[] {
  return error.issues.map((i) => ({ path: i.path.map((p) => (typeof p === "symbol" ? String(p) : p)), message: i.message }));
}

/** One sentence naming the first bad field, e.g. "plant.timeConstant: must be greater than 0". */
export function describeIssues(error: z.ZodError): string {
  const issue = error.issues[0];
  if (!issue) return "The request is not valid.";
  const path = issue.path.map(String).join(".");
  const message = issue.code === "unrecognized_keys" ? `unknown field${issue.keys.length > 1 ? "s" : ""} ${issue.keys.join(", ")}` : issue.message;
  return path ? `${path}: ${message}` : message;
}

/** 400 for a body that did not pass its schema. */
export function invalidBody(error: z.ZodError, code = "invalid_request", message = describeIssues(error)): Response {
  return apiError(400, code, message, zodIssues(error));
}

/** 413; the connection is closed because the unread rest of the body would otherwise poison keep-alive. */
export function payloadTooLarge(message: string, code = "payload_too_large"): Response {
  return apiError(413, code, message, undefined, { connection: "close" });
}

/** 405 naming the methods the route takes. */
export function methodNotAllowed(...methods: string[]): Response {
  return apiError(405, "method_not_allowed", `Use ${methods.join(" or ")}.`, undefined, { allow: methods.join(", ") });
}

export type JsonBodyOptions = {
  /** Bytes the body may have; more is answered 413. */
  limit: number;
  /** Insist on `Content-Type: application/json` (415 otherwise). Default true. */
  requireJsonType?: boolean;
  /** The 413 answer for an oversize body. */
  tooLarge?: (limit: number) => Response;
};

/** Read and parse a JSON body: the value, or the 400 / 413 / 415 answer to return. */
export async function readJsonBody(request: Request, { limit, requireJsonType = true, tooLarge }: JsonBodyOptions): Promise<{ ok: true; value: unknown } | { ok: false; response: Response }> {
  if (requireJsonType && !/^application\/json\b/i.test(request.headers.get("content-type") ?? "")) {
    return { ok: false, response: apiError(415, "unsupported_media_type", "Send the body as application/json.") };
  }
  const text = await readLimitedText(request, limit);
  if (text === null) return { ok: false, response: tooLarge ? tooLarge(limit) : payloadTooLarge(`The body is larger than ${limit} bytes.`) };
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch {
    return { ok: false, response: apiError(400, "invalid_json", "The body is not valid JSON.") };
  }
}
