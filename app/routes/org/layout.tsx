import { Outlet } from "react-router";
import { requireMembership } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listMemberships } from "~/.server/members/organisations";
import { OrgShell } from "~/components/org-shell";
import type { Route } from "./+types/layout";

// Resolves the membership for every page under /o/:slug (404 for a non-member). Child
// loaders run in parallel with this one, so each of them checks again (cached per request).
export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireMembership(request, params.slug);
  const organisations = await listMemberships(getDb(), { userId: membership.user.id });
  return {
    organisation: membership.organisation,
    role: membership.role,
    user: { name: membership.user.name, email: membership.user.email },
    organisations: organisations.map(({ name, slug }) => ({ name, slug })),
  };
}

export default function OrganisationLayout({ loaderData }: Route.ComponentProps) {
  return (
    <OrgShell organisation={loaderData.organisation} organisations={loaderData.organisations} role={loaderData.role} user={loaderData.user}>
      <Outlet />
    </OrgShell>
  );
}

export { ErrorBoundary } from "~/components/route-error";
