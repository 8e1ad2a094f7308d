// Billing rules shared by the server and the pages (pure): the trial, and whether an
// organisation may grow its fleet or start releases.

export const TRIAL_DAYS = 14;
export const TRIAL_MACHINE_LIMIT = 5;

export const PLANS = ["trial", "per_machine"] as const;
export type Plan = (typeof PLANS)[number];
export const BILLING_STATUSES = ["trialing", "active", "past_due", "unpaid", "canceled"] as const;
export type BillingStatus = (typeof BILLING_STATUSES)[number];

export const STATUS_LABELS: Record<BillingStatus, string> = {
  trialing: "Trial",
  active: "Active",
  past_due: "Payment overdue",
  unpaid: "Unpaid",
  canceled: "Cancelled",
};

export type StandingInput = { plan: Plan; status: BillingStatus; trialEndsAt: Date; activeMachines: number };

/** Why new machines and releases are refused, or null when they are not. */
export type HoldReason = "past_due" | "unpaid" | "canceled" | "trial_expired" | "trial_machine_limit";

/**
 * Whether the organisation is held: `adding` machines more would be registered. A trial holds
 * past its end or past TRIAL_MACHINE_LIMIT active machines; a subscription while it is not paid.
 */
export function holdReason({ plan, status, trialEndsAt, activeMachines }: StandingInput, now: Date, adding = 0): HoldReason | null {
  if (plan === "per_machine") {
    if (status === "past_due" || status === "unpaid" || status === "canceled") return status;
    return null;
  }
  if (now.getTime() > trialEndsAt.getTime()) return "trial_expired";
  if (activeMachines + adding > TRIAL_MACHINE_LIMIT) return "trial_machine_limit";
  return null;
}

/** One sentence for the error answer and the banner: what is wrong. */
export function holdMessage(reason: HoldReason): string {
  switch (reason) {
    case "past_due":
      return "The last payment for this organisation's subscription failed, so new machines and releases are paused until it is paid. Running machines are not affected.";
    case "unpaid":
      return "The subscription is unpaid after several failed payments, so new machines and releases are paused. Running machines are not affected.";
    case "canceled":
      return "The subscription has been cancelled, so new machines and releases are paused. Running machines are not affected.";
    case "trial_expired":
      return `The ${TRIAL_DAYS}-day trial has ended, so new machines and releases are paused until a subscription is started. Running machines are not affected.`;
    case "trial_machine_limit":
      return `The trial covers up to ${TRIAL_MACHINE_LIMIT} active machines; more need a subscription. Running machines are not affected.`;
  }
}
