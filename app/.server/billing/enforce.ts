// Enforcement that never endangers a machine: while the organisation is held (a subscription
// past due, unpaid or cancelled; a trial past its end or its machine limit) new machines and
// releases are refused with 402 subscription_inactive. Digests, config pulls, findings and
// alerts never call this.
import type { Db } from "~/.server/db/client";
import { holdMessage } from "~/lib/billing/rules";
import { DomainError } from "~/lib/errors";
import { getBillingStanding } from "./account";

/**
 * Throws a DomainError (402, `subscription_inactive`) when the organisation may not grow its
 * fleet or start a release. `adding`: machines about to be registered (counted against a trial's limit).
 */
export async function requireActiveSubscription(db: Db, organisationId: string, { adding = 0 }: { adding?: number } = {}): Promise<void> {
  const standing = await getBillingStanding(db, { organisationId }, adding);
  if (standing.hold) throw new DomainError("subscription_inactive", `${holdMessage(standing.hold)} The owner can fix this on the billing page.`, { status: 402 });
}
