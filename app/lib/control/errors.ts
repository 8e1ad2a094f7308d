import { DomainError } from "~/lib/errors";

/**
 * The error the control engine throws for bad input: a DomainError whose `field` names the
 * offending input (a dotted path such as `plant.timeConstant`) so a form can put the message
 * beside it.
 */
export class ControlInputError extends DomainError {
  declare readonly field: string;

  constructor(field: string, message: string) {
    super("invalid_input", `${field}: ${message}`, { field, issues: [{ path: field.split("."), message: `${field}: ${message}` }] });
    this.name = "ControlInputError";
  }
}

export function requireFinite(field: string, value: number): number {
  if (typeof value !== "number" || !Number.isFinite(value)) {
    throw new ControlInputError(field, "must be a finite number");
  }
  return value;
}

export function requirePositive(field: string, value: number): number {
  requireFinite(field, value);
  if (value <= 0) throw new ControlInputError(field, "must be greater than zero");
  return value;
}

export function requireNonNegative(field: string, value: number): number {
  requireFinite(field, value);
  if (value < 0) throw new ControlInputError(field, "must not be negative");
  return value;
}
