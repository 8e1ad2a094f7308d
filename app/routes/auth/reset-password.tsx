import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { PasswordSchema } from "~/.server/auth/accounts";
import { getAuth } from "~/.server/auth/auth";
import { readAuthResponse } from "~/.server/auth/call-auth";
import { AuthFrame } from "~/components/auth-frame";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { parseForm } from "~/lib/forms";
import type { Route } from "./+types/reset-password";

export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  return { token: url.searchParams.get("token") ?? "", invalid: url.searchParams.get("error") === "INVALID_TOKEN" };
}

const ResetSchema = z.object({ token: z.string().min(1, "This link has no token."), password: PasswordSchema });

export async function action({ request }: Route.ActionArgs) {
  const parsed = parseForm(ResetSchema, await request.formData());
  if (!parsed.ok) return data({ errors: parsed.errors }, { status: 400 });
  const result = await readAuthResponse(
    await getAuth().api.resetPassword({ body: { token: parsed.data.token, newPassword: parsed.data.password }, asResponse: true }),
  );
  if (!result.ok) return data({ errors: { form: ["This reset link has expired or was already used. Ask for a new one."] } }, { status: 400 });
  throw redirect("/sign-in?reset=1");
}

export default function ResetPassword({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors = actionData?.errors as Record<string, string[] | undefined> | undefined;
  if (!loaderData.token || loaderData.invalid) {
    return (
      <AuthFrame title="This link does not work">
        <Notice tone="error">The reset link is invalid or has expired.</Notice>
        <Link to="/forgot-password" className="mt-4 inline-block text-sm font-medium text-accent hover:underline">Ask for a new link</Link>
      </AuthFrame>
    );
  }
  return (
    <AuthFrame title="Choose a new password">
      <Form method="post" className="space-y-4" noValidate>
        {errors?.form ? <Notice tone="error">{errors.form[0]}</Notice> : null}
        <input type="hidden" name="token" value={loaderData.token} />
        <Field label="New password" name="password" type="password" autoComplete="new-password" required error={errors?.password} help="At least 10 characters." />
        <Button type="submit" disabled={busy}>{busy ? "Saving…" : "Save password"}</Button>
      </Form>
    </AuthFrame>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "New password · Flyball" }];
