// The one place where thrown things become answers. A DomainError (app/lib/errors.ts) is a
// rule the caller broke: its status, code and message. A thrown Response is already an answer.
// Anything else is our fault: logged, and a 500 that says nothing more.
import { data } from "react-router";
import { DomainError } from "~/lib/errors";
import { apiError, jsonResponse } from "./json";

/** The JSON answer for something thrown inside an API route. */
export function errorResponse(error: unknown): Response {
  if (error instanceof Response) return error;
  if (error instanceof DomainError) return apiError(error.status, error.code, error.message, error.issues);
  console.error(error);
  return apiError(500, "internal_error", "Something went wrong on our side.");
}

/** Run an API handler: a value becomes a JSON 200, a Response is sent as it is, and what is thrown goes through errorResponse. */
export async function handleApi(run: () => Promise<Response | unknown> | Response | unknown): Promise<Response> {
  try {
    const result = await run();
    return result instanceof Response ? result : jsonResponse(result);
  } catch (error) {
    return errorResponse(error);
  }
}

/**
 * For page actions: a DomainError becomes `{ ok: false, message, field? }` with its status, for
 * the page to show beside the form; anything else is thrown on to the error boundary.
 */
export function actionFailure<Result extends { ok: boolean; message?: string } = ActionFailure>(error: unknown) {
  if (!(error instanceof DomainError)) throw error;
  const failure: ActionFailure = { ok: false, message: error.message, ...(error.field ? { field: error.field } : {}) };
  // The page's own result type names these fields; they are the same shape.
  return data(failure as unknown as Result, { status: error.status });
}

export type ActionFailure = { ok: false; message: string; field?: string };
