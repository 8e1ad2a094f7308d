// Limits on what a stranger can try: sign-in attempts, e-mails sent on request, device
// enrolments. Each is counted per client address (so a flood from one address never stops
// another address) and, where an account is named, per account (so a password cannot be
// guessed from many addresses either). Counters live in this process's memory
// (rate-limiter-flexible); each key is forgotten when its window ends.
//
// The client address comes from the header scripts/serve.js sets from the socket (or from
// X-Forwarded-For, only when the socket is one of TRUSTED_PROXIES); a client cannot set it.
import { RateLimiterMemory, RateLimiterRes } from "rate-limiter-flexible";
import { isIP } from "node:net";

export const CLIENT_ADDRESS_HEADER = "x-flyball-client-address";

const MINUTE = 60;

/** The limits, in attempts per window (seconds). */
export const ATTEMPT_LIMITS = {
  /** Sign-in attempts from one address, whatever the account. */
  signInPerAddress: { points: 30, duration: MINUTE },
  /** Failed sign-ins for one account from one address. */
  signInFailuresPerAccountAndAddress: { points: 5, duration: 15 * MINUTE },
  /** Failed sign-ins for one account from anywhere (guessing spread over many addresses). */
  signInFailuresPerAccount: { points: 20, duration: 15 * MINUTE },
  /** Password-reset and verification e-mails asked for from one address. */
  emailsPerAddress: { points: 10, duration: 60 * MINUTE },
  /** Password-reset and verification e-mails to one account. */
  emailsPerAccount: { points: 3, duration: 60 * MINUTE },
  /** Device enrolment attempts from one address. */
  enrolmentsPerAddress: { points: 60, duration: MINUTE },
} as const;

type LimitName = keyof typeof ATTEMPT_LIMITS;
const limiters = Object.fromEntries(
  Object.entries(ATTEMPT_LIMITS).map(([name, { points, duration }]) => [name, new RateLimiterMemory({ keyPrefix: name, points, duration })]),
) as Record<LimitName, RateLimiterMemory>;

function disabled(): boolean {
  return Boolean(process.env.FLYBALL_DISABLE_RATE_LIMIT);
}

/** The client's address as scripts/serve.js saw it; an IPv6 address counts by its /64. */
export function clientAddress(request: Request): string {
  const address = request.headers.get(CLIENT_ADDRESS_HEADER)?.trim() ?? "";
  if (isIP(address) === 6) return `${address.split(":").slice(0, 4).join(":")}::/64`;
  return isIP(address) ? address : "unknown";
}

/** Seconds until a refused caller may try again. */
export type Wait = { retryAfterS: number };

const waitOf = (res: RateLimiterRes): Wait => ({ retryAfterS: Math.max(1, Math.ceil(res.msBeforeNext / 1000)) });

/** Take one point; a Wait when the limit is used up. */
async function take(name: LimitName, key: string): Promise<Wait | null> {
  if (disabled()) return null;
  try {
    await limiters[name].consume(key);
    return null;
  } catch (error) {
    if (error instanceof RateLimiterRes) return waitOf(error);
    throw error;
  }
}

const accountKey = (email: string) => email.trim().toLowerCase();

/**
 * May this request try to sign in to `email`? Every attempt counts as a failure until its
 * password proves right (so guesses sent all at once are counted too): one point from the
 * address, one from the account on this address, one from the account everywhere.
 */
export async function admitSignIn(request: Request, email: string): Promise<Wait | null> {
  const address = clientAddress(request);
  const account = accountKey(email);
  return (
    (await take("signInPerAddress", address)) ??
    (await take("signInFailuresPerAccountAndAddress", `${account} ${address}`)) ??
    (await take("signInFailuresPerAccount", account))
  );
}

/** A correct password gives the account's points back. */
export async function recordSignInSuccess(request: Request, email: string): Promise<void> {
  if (disabled()) return;
  const account = accountKey(email);
  await limiters.signInFailuresPerAccountAndAddress.delete(`${account} ${clientAddress(request)}`);
  await limiters.signInFailuresPerAccount.reward(account, 1);
}

/** May this request have an e-mail sent to `email` (reset or verification link)? */
export async function admitEmailRequest(request: Request, email: string): Promise<Wait | null> {
  return (await take("emailsPerAddress", clientAddress(request))) ?? (await take("emailsPerAccount", accountKey(email)));
}

export async function admitEnrolment(request: Request): Promise<Wait | null> {
  return take("enrolmentsPerAddress", clientAddress(request));
}

/** "3 minutes", "40 seconds": for messages to people. */
export function describeWait({ retryAfterS }: Wait): string {
  if (retryAfterS < 90) return `${retryAfterS} seconds`;
  return `${Math.ceil(retryAfterS / 60)} minutes`;
}
