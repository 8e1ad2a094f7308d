import { z } from "zod";

// Every setting the server reads, validated once. Defaults match scripts/start.sh.
export const EnvSchema = z.object({
  NODE_ENV: z.enum(["development", "production", "test"]).default("development"),
  DATABASE_URL: z.string().default("postgres://flyball@127.0.0.1:54329/flyball"),
  DATABASE_POOL_SIZE: z.coerce.number().int().min(1).max(100).default(10),
  BETTER_AUTH_SECRET: z.string().min(32).optional(),
  BETTER_AUTH_URL: z.string().url().default("http://127.0.0.1:3000"),
  /** Extra origins the app is reached from, comma separated. */
  TRUSTED_ORIGINS: z.string().default(""),
  RESEND_API_KEY: z.string().default("re_flyball_local"),
  RESEND_BASE_URL: z.string().url().default("http://127.0.0.1:3025"),
  MAIL_FROM: z.string().default("Flyball <no-reply@flyball.example>"),
  /** 32 bytes, base64url: encrypts organisation signing keys at rest (app/.server/device-auth/signing-keys.ts). */
  FLYBALL_KEY_ENCRYPTION_KEY: z.string().optional(),
  /** Addresses of reverse proxies whose X-Forwarded-For is believed, comma separated (read by scripts/serve.js). */
  TRUSTED_PROXIES: z.string().default(""),
  STRIPE_SECRET_KEY: z.string().default("sk_test_flyball_local"),
  STRIPE_BASE_URL: z.string().url().default("http://127.0.0.1:3026"),
  /** Verifies Stripe-Signature on POST /api/webhooks/stripe (npm start keeps it in .local/stripe-webhook-secret). */
  STRIPE_WEBHOOK_SECRET: z.string().min(1).optional(),
});
export type Env = z.infer<typeof EnvSchema>;

let parsed: Env | undefined;

export function env(): Env {
  if (!parsed) {
    const result = EnvSchema.safeParse(process.env);
    if (!result.success) {
      throw new Error(`Invalid environment: ${z.prettifyError(result.error)}`);
    }
    parsed = result.data;
  }
  return parsed;
}
