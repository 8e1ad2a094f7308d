// The one error type for a broken rule of the domain: a code for machines, a sentence for
// people, the HTTP status it answers with, and, where one input is at fault, its field (and
// issues, for a form). Thrown by domain functions and the control engine alike; answered in one
// place (app/.server/http/errors.ts) for API routes and page actions. Pure: runs in the browser.

export type ErrorIssue = { path: (string | number)[]; message: string };

export type DomainErrorOptions = { status?: number; field?: string; issues?: ErrorIssue[] };

export class DomainError extends Error {
  readonly code: string;
  readonly status: number;
  readonly field?: string;
  readonly issues?: ErrorIssue[];

  constructor(code: string, message: string, { status = 400, field, issues }: DomainErrorOptions = {}) {
    super(message);
    this.name = "DomainError";
    this.code = code;
    this.status = status;
    this.field = field;
    this.issues = issues ?? (field ? [{ path: field.split("."), message }] : undefined);
  }
}
