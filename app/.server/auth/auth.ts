import { betterAuth } from "better-auth";
import { drizzleAdapter } from "better-auth/adapters/drizzle";
import { organization } from "better-auth/plugins";
import { getDb } from "~/.server/db/client";
import * as schema from "~/.server/db/schema";
import { sendEmail } from "~/.server/email/send-email";
import { passwordResetEmail, verificationEmail } from "~/.server/email/templates";
import { env } from "~/.server/env";
import { CLIENT_ADDRESS_HEADER } from "./attempt-limits";
import { ac, roles } from "./roles";

export const MIN_PASSWORD_LENGTH = 10;

function createAuth() {
  const settings = env();
  const trustedOrigins = [
    settings.BETTER_AUTH_URL,
    ...settings.TRUSTED_ORIGINS.split(",").map((o: string) => o.trim()).filter(Boolean),
  ];
  return betterAuth({
    appName: "Flyball",
    baseURL: settings.BETTER_AUTH_URL,
    secret: settings.BETTER_AUTH_SECRET,
    trustedOrigins,
    database: drizzleAdapter(getDb(), {
      provider: "pg",
      schema: { ...schema, organization: schema.organisation },
    }),
    emailAndPassword: {
      enabled: true,
      requireEmailVerification: true,
      minPasswordLength: MIN_PASSWORD_LENGTH,
      maxPasswordLength: 128,
      resetPasswordTokenExpiresIn: 60 * 60,
      sendResetPassword: async ({ user, url }) => {
        await sendEmail({ to: user.email, ...passwordResetEmail(user.name, url) });
      },
    },
    emailVerification: {
      sendOnSignUp: true,
      autoSignInAfterVerification: true,
      expiresIn: 60 * 60 * 24,
      sendVerificationEmail: async ({ user, url }) => {
        await sendEmail({ to: user.email, ...verificationEmail(user.name, url) });
      },
    },
    session: { cookieCache: { enabled: false } },
    rateLimit: { enabled: settings.NODE_ENV === "production" && !process.env.FLYBALL_DISABLE_RATE_LIMIT },
    advanced: {
      // scripts/serve.js sets this header from the socket (or a trusted proxy); clients cannot.
      ipAddress: { ipAddressHeaders: [CLIENT_ADDRESS_HEADER] },
      database: { generateId: () => crypto.randomUUID() },
    },
    plugins: [
      organization({
        ac,
        roles,
        creatorRole: "owner",
        allowUserToCreateOrganization: true,
        invitationExpiresIn: 60 * 60 * 24 * 7,
        cancelPendingInvitationsOnReInvite: true,
        // Invitation e-mails are sent by ~/.server/members/team.ts, which reports delivery failures.
      }),
    ],
  });
}

export type Auth = ReturnType<typeof createAuth>;
let instance: Auth | undefined;

/** The process-wide better-auth instance, built on first use so env is read at run time. */
export function getAuth(): Auth {
  instance ??= createAuth();
  return instance;
}
