/** A rule of the fleet domain was broken; routes turn it into a 4xx answer. */
export class FleetRuleError extends Error {
  constructor(
    readonly code: string,
    message: string,
    readonly status: 400 | 403 | 404 | 409 | 422 = 400,
    readonly issues?: unknown,
  ) {
    super(message);
  }
}
