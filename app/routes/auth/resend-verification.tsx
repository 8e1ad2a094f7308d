import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import { sendVerificationLink } from "~/.server/auth/accounts";
import { safeNext } from "~/lib/web/safe-next";
import { admitEmailRequest, describeWait } from "~/.server/auth/attempt-limits";
import { AuthFrame } from "~/components/auth-frame";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { type FieldErrors, parseForm } from "~/lib/forms";
import type { Route } from "./+types/resend-verification";

export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  return { email: url.searchParams.get("email") ?? "", next: url.searchParams.get("next") ?? "" };
}

const ResendSchema = z.object({ email: z.email("Enter an e-mail address.").trim().toLowerCase(), next: z.string().optional() });

export async function action({ request }: Route.ActionArgs) {
  const parsed = parseForm(ResendSchema, await request.formData());
  if (!parsed.ok) return data({ errors: parsed.errors, sent: false }, { status: 400 });
  const wait = await admitEmailRequest(request, parsed.data.email);
  if (wait) {
    return data({ errors: { form: [`Too many links asked for. Try again in ${describeWait(wait)}.`] }, sent: false }, { status: 429, headers: { "retry-after": String(wait.retryAfterS) } });
  }
  const delivery = await sendVerificationLink(parsed.data.email, safeNext(parsed.data.next));
  if (!delivery.sent) return data({ errors: { form: [delivery.reason] }, sent: false }, { status: 502 });
  return { errors: null, sent: true };
}

export default function ResendVerification({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  return (
    <AuthFrame title="Confirm your e-mail address" subtitle="We send a new link to the address below.">
      <Form method="post" className="space-y-4" noValidate>
        {actionData?.sent ? <Notice tone="success" title="Link sent">If an unconfirmed account uses this address, the link is on its way.</Notice> : null}
        {actionData?.errors?.form ? <Notice tone="error">{actionData.errors.form[0]}</Notice> : null}
        <input type="hidden" name="next" value={loaderData.next} />
        <Field label="E-mail" name="email" type="email" defaultValue={loaderData.email} required error={(actionData?.errors as FieldErrors | null | undefined)?.email} />
        <Button type="submit" disabled={busy}>{busy ? "Sending…" : "Send the link"}</Button>
      </Form>
    </AuthFrame>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Confirm e-mail · Flyball" }];
