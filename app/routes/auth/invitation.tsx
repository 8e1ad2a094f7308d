import { DomainError } from "~/lib/errors";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import { getSessionUser } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { acceptInvitation, getInvitationPreview } from "~/.server/members/team";
import { AuthFrame } from "~/components/auth-frame";
import { Button, buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { isRole, ROLE_LABELS } from "~/lib/access/capabilities";
import type { Route } from "./+types/invitation";

export async function loader({ request, params }: Route.LoaderArgs) {
  const preview = await getInvitationPreview(getDb(), params.id);
  if (!preview) throw data({ message: "This invitation does not exist." }, { status: 404 });
  const user = await getSessionUser(request);
  return {
    invitation: {
      organisationName: preview.organisationName,
      email: preview.email,
      roleLabel: isRole(preview.role) ? ROLE_LABELS[preview.role] : preview.role,
      usable: preview.status === "pending" && preview.expiresAt > new Date(),
      status: preview.status,
    },
    user: user ? { email: user.email } : null,
    path: `/invitations/${params.id}`,
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await getSessionUser(request);
  if (!user) throw redirect(`/sign-in?next=${encodeURIComponent(`/invitations/${params.id}`)}`);
  const preview = await getInvitationPreview(getDb(), params.id);
  if (!preview) throw data({ message: "This invitation does not exist." }, { status: 404 });
  try {
    await acceptInvitation(params.id, request.headers);
  } catch (error) {
    if (error instanceof DomainError) return data({ error: error.message }, { status: 400 });
    throw error;
  }
  throw redirect(`/o/${preview.slug}`);
}

export default function Invitation({ loaderData, actionData }: Route.ComponentProps) {
  const { invitation, user } = loaderData;
  const busy = useNavigation().state === "submitting";
  const next = encodeURIComponent(loaderData.path);
  return (
    <AuthFrame title={`Join ${invitation.organisationName}`} subtitle={`You were invited as ${invitation.roleLabel}, at ${invitation.email}.`}>
      {!invitation.usable ? (
        <Notice tone="error" title="This invitation can no longer be used">
          It was {invitation.status === "pending" ? "not accepted in time" : invitation.status}. Ask the organisation for a new one.
        </Notice>
      ) : !user ? (
        <div className="space-y-3">
          <p className="text-sm text-ink-soft">Sign in or create an account with {invitation.email} to accept.</p>
          <div className="flex flex-wrap gap-2">
            <Link className={buttonClass("primary")} to={`/sign-up?email=${encodeURIComponent(invitation.email)}&next=${next}`}>Create account</Link>
            <Link className={buttonClass("secondary")} to={`/sign-in?next=${next}`}>Sign in</Link>
          </div>
        </div>
      ) : user.email !== invitation.email ? (
        <Notice tone="error" title="Signed in with another address">
          You are signed in as {user.email}; this invitation is for {invitation.email}. Sign out and sign in with the invited address.
        </Notice>
      ) : (
        <Form method="post" className="space-y-4">
          {actionData?.error ? <Notice tone="error">{actionData.error}</Notice> : null}
          <Button type="submit" disabled={busy}>{busy ? "Joining…" : "Accept and join"}</Button>
        </Form>
      )}
    </AuthFrame>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Invitation · Flyball" }];
