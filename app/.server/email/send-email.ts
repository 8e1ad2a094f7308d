// The one adapter for outgoing e-mail: the real Resend SDK, pointed by RESEND_BASE_URL at
// fakes/resend locally. A refused or failed send throws, so callers never claim success.
import { Resend } from "resend";
import { env } from "~/.server/env";

export type OutgoingEmail = { to: string; subject: string; text: string; html: string };

export class EmailDeliveryError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "EmailDeliveryError";
  }
}

let client: Resend | undefined;

function getClient(): Resend {
  if (!client) {
    const { RESEND_API_KEY, RESEND_BASE_URL } = env();
    client = new Resend(RESEND_API_KEY, { baseUrl: RESEND_BASE_URL } as ConstructorParameters<typeof Resend>[1]);
  }
  return client;
}

/**
 * Send one e-mail. `idempotencyKey` goes out as Resend's `Idempotency-Key` header: the service
 * (and the local fake) answers a repeat of the same key with the first message instead of a second.
 */
export async function sendEmail(message: OutgoingEmail, { idempotencyKey }: { idempotencyKey?: string } = {}): Promise<{ id: string }> {
  let result: Awaited<ReturnType<Resend["emails"]["send"]>>;
  try {
    result = await getClient().emails.send({ from: env().MAIL_FROM, ...message }, idempotencyKey ? { idempotencyKey } : undefined);
  } catch (cause) {
    throw new EmailDeliveryError(`The e-mail service could not be reached (${String(cause)}).`);
  }
  if (result.error || !result.data) {
    throw new EmailDeliveryError(`The e-mail service refused the message: ${result.error?.message ?? "no answer"}.`);
  }
  return { id: result.data.id };
}
