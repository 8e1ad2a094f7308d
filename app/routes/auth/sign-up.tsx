import { data, Form, Link, redirect, useNavigation } from "react-router";
import { getSessionUser } from "~/.server/auth/guards";
import { SignUpSchema, signUpWithPassword } from "~/.server/auth/accounts";
import { safeNext } from "~/lib/web/safe-next";
import { admitEmailRequest, describeWait } from "~/.server/auth/attempt-limits";
import { AuthFrame } from "~/components/auth-frame";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { parseForm } from "~/lib/forms";
import type { Route } from "./+types/sign-up";

export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  if (await getSessionUser(request)) throw redirect(safeNext(url.searchParams.get("next")));
  return { next: url.searchParams.get("next") ?? "", email: url.searchParams.get("email") ?? "" };
}

export async function action({ request }: Route.ActionArgs) {
  const parsed = parseForm(SignUpSchema, await request.formData());
  if (!parsed.ok) return data({ errors: parsed.errors, created: null }, { status: 400 });
  const wait = await admitEmailRequest(request, parsed.data.email);
  if (wait) {
    return data({ errors: { form: [`Too many sign-ups from here. Try again in ${describeWait(wait)}.`] } as Record<string, string[]>, created: null }, { status: 429, headers: { "retry-after": String(wait.retryAfterS) } });
  }
  const result = await signUpWithPassword(parsed.data, request.headers);
  if (!result.ok) return data({ errors: result.errors, created: null }, { status: 400 });
  return data(
    { errors: null, created: { email: parsed.data.email, delivery: result.delivery } },
    { status: result.delivery.sent ? 200 : 502 },
  );
}

export default function SignUp({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors = actionData?.errors;
  const created = actionData?.created;
  if (created) {
    return (
      <AuthFrame title="Check your inbox" subtitle={`We created the account for ${created.email}.`}>
        {created.delivery.sent ? (
          <Notice tone="success" title="Confirmation e-mail sent">
            Open the link in the message to confirm your address; you will be signed in.
          </Notice>
        ) : (
          <Notice tone="error" title="The confirmation e-mail was not sent">
            {created.delivery.reason} Your account exists; ask for the link again below once the problem is fixed.
          </Notice>
        )}
        <Link to={`/resend-verification?email=${encodeURIComponent(created.email)}`} className="mt-4 inline-block text-sm font-medium text-accent hover:underline">
          Send the link again
        </Link>
      </AuthFrame>
    );
  }
  return (
    <AuthFrame
      title="Create your Flyball account"
      subtitle="For OEM engineers, site managers and account owners."
      footer={
        <>
          Already have an account?{" "}
          <Link to={`/sign-in${loaderData.next ? `?next=${encodeURIComponent(loaderData.next)}` : ""}`} className="link-in-text font-medium">
            Sign in
          </Link>
        </>
      }
    >
      <Form method="post" className="space-y-4" noValidate>
        {errors?.form ? <Notice tone="error">{errors.form[0]}</Notice> : null}
        <input type="hidden" name="next" value={loaderData.next} />
        <Field label="Name" name="name" autoComplete="name" required error={errors?.name} help="Shown to your colleagues." />
        <Field label="Work e-mail" name="email" type="email" autoComplete="email" defaultValue={loaderData.email} required error={errors?.email} help="We send a confirmation link here." />
        <Field label="Password" name="password" type="password" autoComplete="new-password" required error={errors?.password} help="At least 10 characters." />
        <Button type="submit" className="w-full" disabled={busy}>
          {busy ? "Creating account…" : "Create account"}
        </Button>
      </Form>
    </AuthFrame>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Create an account · Flyball" }];
