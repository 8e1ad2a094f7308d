// Account flows the pages call: each validates, calls better-auth, and says what happened.
import { eq } from "drizzle-orm";
import { z } from "zod";
import { getDb } from "~/.server/db/client";
import { user } from "~/.server/db/schema";
import { EmailDeliveryError } from "~/.server/email/send-email";
import { getAuth, MIN_PASSWORD_LENGTH } from "./auth";
import { safeNext } from "~/lib/web/safe-next";
import { readAuthResponse, type AuthResult } from "./call-auth";

export const PasswordSchema = z
  .string()
  .min(MIN_PASSWORD_LENGTH, `Use at least ${MIN_PASSWORD_LENGTH} characters.`)
  .max(128, "Use at most 128 characters.");

export const SignUpSchema = z.object({
  name: z.string().trim().min(1, "Enter your name.").max(100, "Use at most 100 characters."),
  email: z.email("Enter an e-mail address such as ada@example.com.").trim().toLowerCase(),
  password: PasswordSchema,
  next: z.string().optional(),
});

export async function isEmailTaken(email: string): Promise<boolean> {
  const [row] = await getDb().select({ id: user.id }).from(user).where(eq(user.email, email.toLowerCase())).limit(1);
  return Boolean(row);
}

/**
 * Send the confirmation link. better-auth's sign-up hook swallows delivery errors, so the
 * message is sent through this call, which does report them.
 */
export async function sendVerificationLink(email: string, callbackURL: string): Promise<{ sent: true } | { sent: false; reason: string }> {
  try {
    await getAuth().api.sendVerificationEmail({ body: { email, callbackURL } });
    return { sent: true };
  } catch (error) {
    const reason = error instanceof EmailDeliveryError ? error.message : "The confirmation e-mail could not be sent.";
    return { sent: false, reason };
  }
}

export async function signUpWithPassword(
  input: z.infer<typeof SignUpSchema>,
  headers: Headers,
): Promise<{ ok: true; delivery: Awaited<ReturnType<typeof sendVerificationLink>> } | { ok: false; errors: Record<string, string[]> }> {
  if (await isEmailTaken(input.email)) {
    return { ok: false, errors: { email: ["An account with this e-mail address already exists. Sign in instead."] } };
  }
  const result: AuthResult = await readAuthResponse(
    await getAuth().api.signUpEmail({
      body: { name: input.name, email: input.email, password: input.password },
      headers,
      asResponse: true,
    }),
  );
  if (!result.ok) {
    return { ok: false, errors: { form: [String(result.body.message ?? "The account could not be created.")] } };
  }
  return { ok: true, delivery: await sendVerificationLink(input.email, safeNext(input.next)) };
}
