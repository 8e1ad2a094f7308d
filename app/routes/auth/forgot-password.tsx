import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { admitEmailRequest, describeWait } from "~/.server/auth/attempt-limits";
import { getAuth } from "~/.server/auth/auth";
import { AuthFrame } from "~/components/auth-frame";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { parseForm } from "~/lib/forms";
import type { Route } from "./+types/forgot-password";

const ForgotSchema = z.object({ email: z.email("Enter an e-mail address.").trim().toLowerCase() });

export async function action({ request }: Route.ActionArgs) {
  const parsed = parseForm(ForgotSchema, await request.formData());
  if (!parsed.ok) return data({ errors: parsed.errors, sent: false }, { status: 400 });
  const wait = await admitEmailRequest(request, parsed.data.email);
  if (wait) {
    return data({ errors: { email: [`Too many reset links asked for. Try again in ${describeWait(wait)}.`] }, sent: false }, { status: 429, headers: { "retry-after": String(wait.retryAfterS) } });
  }
  await getAuth().api.requestPasswordReset({ body: { email: parsed.data.email, redirectTo: "/reset-password" }, headers: request.headers });
  // The same answer whether or not the address has an account.
  return { errors: null, sent: true };
}

export default function ForgotPassword({ actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  return (
    <AuthFrame title="Reset your password" subtitle="We e-mail you a link to choose a new one." footer={<Link to="/sign-in" className="link-in-text">Back to sign in</Link>}>
      {actionData?.sent ? (
        <Notice tone="success" title="Check your inbox">If an account uses this address, a reset link is on its way. It works for one hour.</Notice>
      ) : (
        <Form method="post" className="space-y-4" noValidate>
          <Field label="E-mail" name="email" type="email" autoComplete="email" required error={actionData?.errors?.email} />
          <Button type="submit" disabled={busy}>{busy ? "Sending…" : "Send reset link"}</Button>
        </Form>
      )}
    </AuthFrame>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Reset password · Flyball" }];
