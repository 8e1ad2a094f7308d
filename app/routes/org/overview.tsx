import { requireCapableMember } from "~/.server/auth/guards";
import { PageHeader } from "~/components/org-shell";
import { ROLE_LABELS } from "~/lib/access/capabilities";
import type { Route } from "./+types/overview";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  return { organisation: membership.organisation, role: membership.role };
}

export default function Overview({ loaderData }: Route.ComponentProps) {
  const { organisation, role } = loaderData;
  return (
    <>
      <PageHeader title={organisation.name} description={`Overview · you are ${ROLE_LABELS[role].toLowerCase()} here.`} />
      <div className="px-5 py-6 sm:px-8">
        <div className="rounded-xl border border-dashed border-rule bg-white px-6 py-10">
          <h2 className="font-semibold">Loop health will appear here</h2>
          <p className="mt-2 max-w-xl text-sm text-ink-soft">
            Once machines are registered and their devices post digests, this page shows which loops are steady, which need watching and which need action.
          </p>
        </div>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.organisation.name ?? "Overview"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
