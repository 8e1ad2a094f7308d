import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { getAuth } from "~/.server/auth/auth";
import { safeNext } from "~/lib/web/safe-next";
import { admitSignIn, describeWait, recordSignInSuccess } from "~/.server/auth/attempt-limits";
import { authErrorCode, readAuthResponse } from "~/.server/auth/call-auth";
import { getSessionUser } from "~/.server/auth/guards";
import { AuthFrame } from "~/components/auth-frame";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { type FieldErrors, parseForm } from "~/lib/forms";
import type { Route } from "./+types/sign-in";

export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  if (await getSessionUser(request)) throw redirect(safeNext(url.searchParams.get("next")));
  return { next: url.searchParams.get("next") ?? "", reset: url.searchParams.get("reset") === "1" };
}

const SignInSchema = z.object({
  email: z.email("Enter your e-mail address.").trim().toLowerCase(),
  password: z.string().min(1, "Enter your password."),
  next: z.string().optional(),
});

export async function action({ request }: Route.ActionArgs) {
  const parsed = parseForm(SignInSchema, await request.formData());
  if (!parsed.ok) return data({ errors: parsed.errors, unverified: null }, { status: 400 });
  const { email, password, next } = parsed.data;
  const wait = await admitSignIn(request, email);
  if (wait) {
    return data(
      { errors: { form: [`Too many sign-in attempts. Try again in ${describeWait(wait)}.`] }, unverified: null },
      { status: 429, headers: { "retry-after": String(wait.retryAfterS) } },
    );
  }
  const result = await readAuthResponse(
    await getAuth().api.signInEmail({ body: { email, password }, headers: request.headers, asResponse: true }),
  );
  if (result.ok) {
    await recordSignInSuccess(request, email);
    throw redirect(safeNext(next), { headers: result.cookies });
  }
  if (authErrorCode(result) === "EMAIL_NOT_VERIFIED") {
    return data({ errors: { form: ["Confirm your e-mail address first: open the link we sent you."] }, unverified: email }, { status: 403 });
  }
  return data({ errors: { form: ["That e-mail and password do not match an account."] }, unverified: null }, { status: 401 });
}

export default function SignIn({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors = actionData?.errors as FieldErrors | null | undefined;
  const nextQuery = loaderData.next ? `?next=${encodeURIComponent(loaderData.next)}` : "";
  return (
    <AuthFrame
      title="Sign in to Flyball"
      footer={
        <>
          New here?{" "}
          <Link to={`/sign-up${nextQuery}`} className="link-in-text font-medium">
            Create an account
          </Link>
        </>
      }
    >
      <Form method="post" className="space-y-4" noValidate>
        {loaderData.reset ? <Notice tone="success" title="Password changed">Sign in with your new password.</Notice> : null}
        {errors?.form ? (
          <Notice tone="error">
            {errors.form[0]}
            {actionData?.unverified ? (
              <>
                {" "}
                <Link className="font-medium text-accent underline" to={`/resend-verification?email=${encodeURIComponent(actionData.unverified)}`}>
                  Send the link again
                </Link>
              </>
            ) : null}
          </Notice>
        ) : null}
        <input type="hidden" name="next" value={loaderData.next} />
        <Field label="E-mail" name="email" type="email" autoComplete="email" required error={errors?.email} />
        <Field label="Password" name="password" type="password" autoComplete="current-password" required error={errors?.password} />
        <div className="flex items-center justify-between gap-4">
          <Button type="submit" disabled={busy}>
            {busy ? "Signing in…" : "Sign in"}
          </Button>
          <Link to="/forgot-password" className="text-sm text-accent hover:underline">
            Forgot your password?
          </Link>
        </div>
      </Form>
    </AuthFrame>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Sign in · Flyball" }];
