import { Link } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listReleases } from "~/.server/releases/releases";
import { formatDateTime } from "~/components/fleet/format";
import { PageHeader } from "~/components/org-shell";
import { ReleaseStateBadge } from "~/components/releases/release-parts";
import { buttonClass } from "~/components/ui/button";
import { can } from "~/lib/access/capabilities";
import { ReleaseListQuerySchema } from "~/lib/release/schemas";
import type { Route } from "./+types/releases";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:read");
  const parsed = ReleaseListQuerySchema.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  const query = parsed.success ? parsed.data : ReleaseListQuerySchema.parse({});
  const releases = await listReleases(getDb(), { organisationId: membership.organisation.id, ...query });
  return { releases, slug: membership.organisation.slug, canOperate: can(membership.role, "release:operate") };
}

export default function Releases({ loaderData }: Route.ComponentProps) {
  const { releases, slug, canOperate } = loaderData;
  const pages = Math.max(1, Math.ceil(releases.total / releases.pageSize));
  return (
    <>
      <PageHeader
        title="Releases"
        description="Approved gain sets on their way to machines: a pilot wave first, a guard window, then the rest."
        action={canOperate ? <Link to={`/o/${slug}/releases/new`} className={buttonClass()}>Start a release</Link> : undefined}
      />
      <div className="px-5 py-6 sm:px-8">
        {releases.total === 0 ? (
          <div className="rounded-xl border border-dashed border-rule-strong bg-white p-6 text-sm text-ink-soft">
            <p className="font-medium text-ink">No releases yet.</p>
            <p className="mt-1">A release sends an approved gain set to a pilot group of machines, watches their loops for a while, and then widens to the rest — or holds itself when the pilot loops get worse.</p>
            {canOperate ? <Link to={`/o/${slug}/releases/new`} className="link-in-text mt-2 inline-block">Start one from an approved gain set</Link> : null}
          </div>
        ) : (
          <div role="region" aria-label="Releases" tabIndex={0} className="overflow-x-auto rounded-xl border border-rule bg-white">
            <table className="w-full text-sm">
              <caption className="sr-only">Releases, newest first</caption>
              <thead className="sticky top-0 bg-paper-deep text-left text-xs text-ink-soft">
                <tr>
                  <th scope="col" className="px-3 py-2 font-medium">Started</th>
                  <th scope="col" className="px-3 py-2 font-medium">Gain set</th>
                  <th scope="col" className="px-3 py-2 font-medium">State</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">Machines</th>
                  <th scope="col" className="px-3 py-2 text-right font-medium">Loops applied</th>
                  <th scope="col" className="px-3 py-2 font-medium">Why held</th>
                </tr>
              </thead>
              <tbody>
                {releases.items.map((r) => (
                  <tr key={r.id} className="border-t border-rule">
                    <td className="px-3 py-2 whitespace-nowrap">
                      <Link to={`/o/${slug}/releases/${r.id}`} className="text-accent hover:underline">{formatDateTime(r.createdAt)}</Link>
                    </td>
                    <td className="px-3 py-2 font-mono text-xs">{r.templateKey} v{r.gainSetVersion}</td>
                    <td className="px-3 py-2"><ReleaseStateBadge state={r.state} /></td>
                    <td className="px-3 py-2 text-right tabular-nums">{r.machineCount}</td>
                    <td className="px-3 py-2 text-right tabular-nums">{r.applied} <span className="text-ink-faint">of {r.loops}</span></td>
                    <td className="max-w-md truncate px-3 py-2 text-ink-soft" title={r.heldReason ?? undefined}>{r.heldReason ?? ""}</td>
                  </tr>
                ))}
              </tbody>
            </table>
            <p className="border-t border-rule px-3 py-2 text-xs text-ink-faint">
              {releases.total} release{releases.total === 1 ? "" : "s"} · page {releases.page} of {pages}
              {releases.page > 1 ? <Link className="link-in-text ml-3" to={`?page=${releases.page - 1}`}>Newer</Link> : null}
              {releases.page < pages ? <Link className="link-in-text ml-3" to={`?page=${releases.page + 1}`}>Older</Link> : null}
            </p>
          </div>
        )}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Releases · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
