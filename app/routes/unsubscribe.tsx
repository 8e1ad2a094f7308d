// /unsubscribe?token=… — stop alert e-mails from a link, without signing in. The token is
// signed and expires (~/.server/health/alerts.ts). Opening the link only shows what it stops
// (mail scanners open links); the button does it.
import { data, Form, Link } from "react-router";
import { getDb } from "~/.server/db/client";
import { readUnsubscribeToken, unsubscribeWithToken } from "~/.server/health/alerts";
import { AuthFrame } from "~/components/auth-frame";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { DomainError } from "~/lib/errors";
import type { Route } from "./+types/unsubscribe";

export function meta() {
  return [{ title: "Stop alert e-mails · Flyball" }];
}

export async function loader({ request }: Route.LoaderArgs) {
  const token = new URL(request.url).searchParams.get("token") ?? "";
  const claims = token ? await readUnsubscribeToken(token) : null;
  return { token, valid: claims !== null };
}

export async function action({ request }: Route.ActionArgs) {
  const form = await request.formData();
  const token = String(form.get("token") ?? "");
  try {
    const done = await unsubscribeWithToken(getDb(), token);
    return { ok: true as const, email: done.email, organisationName: done.organisationName };
  } catch (error) {
    if (error instanceof DomainError) return data({ ok: false as const, message: error.message }, { status: error.status });
    throw error;
  }
}

export default function Unsubscribe({ loaderData, actionData }: Route.ComponentProps) {
  const footer = <Link to="/sign-in" className="link-in-text">Sign in to choose which alerts you get</Link>;
  if (actionData?.ok) {
    return (
      <AuthFrame title="Alert e-mails stopped" subtitle={actionData.organisationName} footer={footer}>
        <Notice tone="success" title="Done">{actionData.email} gets no more loop-health alert e-mails from {actionData.organisationName}.</Notice>
      </AuthFrame>
    );
  }
  if (!loaderData.valid || (actionData && !actionData.ok)) {
    return (
      <AuthFrame title="This link does not work" subtitle="Unsubscribe links expire after 60 days." footer={footer}>
        <Notice tone="error" title="Not valid">{actionData && !actionData.ok ? actionData.message : "The link is not valid or has expired. Sign in to change your alerts."}</Notice>
      </AuthFrame>
    );
  }
  return (
    <AuthFrame title="Stop alert e-mails" subtitle="Loop-health alerts for this organisation." footer={footer}>
      <Form method="post" className="space-y-4">
        <input type="hidden" name="token" value={loaderData.token} />
        <p className="text-ink-soft">You will get no more e-mails about findings. Everything else stays as it is.</p>
        <Button type="submit">Stop alert e-mails</Button>
      </Form>
    </AuthFrame>
  );
}
