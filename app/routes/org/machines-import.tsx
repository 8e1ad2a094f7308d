import { Link } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { PageHeader } from "~/components/org-shell";
import { buttonClass } from "~/components/ui/button";
import type { Route } from "./+types/machines-import";

// Bulk import from CSV is not built yet; the page says so and offers single registration.
export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "machines:manage");
  return { slug: membership.organisation.slug };
}

export default function ImportMachines({ loaderData }: Route.ComponentProps) {
  const { slug } = loaderData;
  return (
    <>
      <PageHeader title="Import machines" crumbs={[{ label: "Machines", to: `/o/${slug}/machines` }, { label: "Import" }]} />
      <div className="max-w-xl space-y-3 px-5 py-6 text-sm text-ink-soft sm:px-8">
        <p>Importing a list of machines from a CSV file is not available yet. Until then, register machines one at a time; each gets its own enrolment code.</p>
        <Link to={`/o/${slug}/machines/new`} className={buttonClass("primary")}>Register a machine</Link>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Import machines · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
