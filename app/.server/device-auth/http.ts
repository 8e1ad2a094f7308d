// JSON answers of the device and management APIs: `{"error": {"code", "message", "issues"?}}`.
import type { z } from "zod";
import { RAW_BODY, readLimitedText } from "~/.server/http/body";

export { readLimitedText };

const JSON_HEADERS = { "content-type": "application/json; charset=utf-8", "cache-control": "no-store" };

export function jsonResponse(body: unknown, status = 200, headers: Record<string, string> = {}): Response {
  const text = JSON.stringify(body);
  const response = new Response(text, { status, headers: { ...JSON_HEADERS, ...headers } });
  Object.defineProperty(response, RAW_BODY, { value: text });
  return response;
}

export type Issue = { path: (string | number)[]; message: string };

export function apiError(status: number, code: string, message: string, issues?: Issue[], headers: Record<string, string> = {}): Response {
  return jsonResponse({ error: issues ? { code, message, issues } : { code, message } }, status, headers);
}

export function zodIssues(error: z.ZodError): Issue[] {
  return error.issues.map((i) => ({ path: i.path.map((p) => (typeof p === "symbol" ? String(p) : p)), message: i.message }));
}


/** Parse JSON, or answer 400 / 413 / 415. */
export async function readJsonBody(request: Request, limit: number): Promise<{ ok: true; value: unknown } | { ok: false; response: Response }> {
  const type = request.headers.get("content-type") ?? "";
  if (!/^application\/json\b/i.test(type)) return { ok: false, response: apiError(415, "unsupported_media_type", "Send the body as application/json.") };
  const text = await readLimitedText(request, limit);
  if (text === null) return { ok: false, response: payloadTooLarge(`The body is larger than ${limit} bytes.`) };
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch {
    return { ok: false, response: apiError(400, "invalid_json", "The body is not valid JSON.") };
  }
}

/** 413; the connection is closed because the unread body would otherwise poison keep-alive. */
export function payloadTooLarge(message: string, code = "payload_too_large"): Response {
  return apiError(413, code, message, undefined, { connection: "close" });
}
