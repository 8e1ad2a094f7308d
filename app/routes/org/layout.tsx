import { Outlet } from "react-router";
import { getBillingStanding, getOwners } from "~/.server/billing/account";
import { requireMembership } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listMemberships } from "~/.server/members/organisations";
import { HoldBanner } from "~/components/billing/hold-banner";
import { OrgShell } from "~/components/org-shell";
import { can } from "~/lib/access/capabilities";
import type { Route } from "./+types/layout";

// Resolves the membership for every page under /o/:slug (404 for a non-member). Child
// loaders run in parallel with this one, so each of them checks again (cached per request).
export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireMembership(request, params.slug);
  const db = getDb();
  const organisationId = membership.organisation.id;
  const [organisations, standing] = await Promise.all([listMemberships(db, { userId: membership.user.id }), getBillingStanding(db, { organisationId })]);
  const canManageBilling = can(membership.role, "billing:manage");
  // The OEM's own people see why new machines and releases are paused; a site manager works for
  // the OEM's customer, whose machines are unaffected, so the OEM's billing is not theirs to see.
  const showHold = standing.hold !== null && can(membership.role, "registry:read");
  const owner = showHold && !canManageBilling ? (await getOwners(db, { organisationId }))[0] : undefined;
  return {
    organisation: membership.organisation,
    role: membership.role,
    user: { name: membership.user.name, email: membership.user.email },
    organisations: organisations.map(({ name, slug }) => ({ name, slug })),
    billingHold: showHold && standing.hold ? { hold: standing.hold, canManage: canManageBilling, ownerName: owner?.name ?? null } : null,
  };
}

export default function OrganisationLayout({ loaderData }: Route.ComponentProps) {
  const { billingHold } = loaderData;
  return (
    <OrgShell organisation={loaderData.organisation} organisations={loaderData.organisations} role={loaderData.role} user={loaderData.user}>
      {billingHold ? <HoldBanner hold={billingHold.hold} slug={loaderData.organisation.slug} canManage={billingHold.canManage} ownerName={billingHold.ownerName} /> : null}
      <Outlet />
    </OrgShell>
  );
}

export { ErrorBoundary } from "~/components/route-error";
