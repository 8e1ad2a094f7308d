import { Link } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listMachines } from "~/.server/fleet/machines";
import { MachineListQuerySchema } from "~/lib/fleet/schemas";
import { getSiteScope } from "~/.server/fleet/scope";
import { HealthBadge, HEALTH_LABELS } from "~/components/fleet/health-badge";
import { PageHeader } from "~/components/org-shell";
import { buttonClass } from "~/components/ui/button";
import { can, ROLE_LABELS } from "~/lib/access/capabilities";
import type { HealthBand } from "~/lib/health";
import type { Route } from "./+types/overview";

const BANDS: HealthBand[] = ["act", "watch", "silent", "steady"];

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const query = (health: HealthBand, pageSize: number) =>
    listMachines(db, scope, MachineListQuerySchema.parse({ status: "active", health, sort: "health", dir: "desc", pageSize }));
  const [act, watch, silent, steady] = await Promise.all([query("act", 8), query("watch", 8), query("silent", 1), query("steady", 1)]);
  return {
    organisation: membership.organisation,
    role: membership.role,
    siteScoped: scope.siteIds !== null,
    counts: { act: act.total, watch: watch.total, silent: silent.total, steady: steady.total },
    attention: [...act.items, ...watch.items].slice(0, 8),
    canRegister: can(membership.role, "machines:manage"),
  };
}

export default function Overview({ loaderData }: Route.ComponentProps) {
  const { organisation, role, counts, attention, siteScoped, canRegister } = loaderData;
  const base = `/o/${organisation.slug}`;
  const total = counts.act + counts.watch + counts.silent + counts.steady;
  return (
    <>
      <PageHeader
        title={organisation.name}
        description={`Loop health of ${siteScoped ? "the machines at your sites" : "the fleet"} · you are ${ROLE_LABELS[role].toLowerCase()} here.`}
        action={<Link to={`${base}/machines`} className={buttonClass("secondary")}>All machines</Link>}
      />
      <div className="space-y-6 px-5 py-6 sm:px-8">
        {total === 0 ? (
          <div className="rounded-xl border border-dashed border-rule bg-white px-6 py-10">
            <h2 className="font-semibold">No machines in service yet</h2>
            <p className="mt-2 max-w-xl text-sm text-ink-soft">
              Once machines are registered and their devices post digests, this page shows which loops are steady, which need watching and which need action.
            </p>
            {canRegister ? (
              <Link to={`${base}/machines/new`} className={buttonClass("primary", "mt-4")}>Register a machine</Link>
            ) : null}
          </div>
        ) : (
          <>
            <section aria-labelledby="bands-heading">
              <h2 id="bands-heading" className="sr-only">Machines by health</h2>
              <ul className="grid grid-cols-2 gap-3 lg:grid-cols-4">
                {BANDS.map((band) => (
                  <li key={band}>
                    <Link to={`${base}/machines?health=${band}`} className="block h-full rounded-xl border border-rule bg-white px-4 py-3 hover:border-accent/40">
                      <HealthBadge band={band} />
                      <p className="mt-2 text-2xl font-semibold tabular">{counts[band]}</p>
                      <p className="text-xs text-ink-faint">
                        {counts[band] === 1 ? "machine" : "machines"} whose worst loop is {HEALTH_LABELS[band].toLowerCase()}
                      </p>
                    </Link>
                  </li>
                ))}
              </ul>
            </section>
            <section aria-labelledby="attention-heading">
              <h2 id="attention-heading" className="font-semibold">Needs attention</h2>
              {attention.length === 0 ? (
                <p className="mt-2 rounded-xl border border-dashed border-rule bg-white px-5 py-6 text-sm text-ink-soft">
                  No machine has a loop in the act or watch band right now.
                </p>
              ) : (
                <ul className="mt-3 divide-y divide-rule overflow-hidden rounded-xl border border-rule bg-white">
                  {attention.map((m) => (
                    <li key={m.id}>
                      <Link to={`${base}/machines/${m.id}`} className="flex flex-wrap items-center justify-between gap-x-4 gap-y-1 px-4 py-2.5 text-sm hover:bg-paper">
                        <span className="min-w-0">
                          <span className="font-medium">{m.serial}</span>
                          <span className="ml-2 text-ink-faint">{m.customer.name} · {m.site.name}</span>
                        </span>
                        <HealthBadge band={m.health.band} score={m.health.score} />
                      </Link>
                    </li>
                  ))}
                </ul>
              )}
            </section>
          </>
        )}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.organisation.name ?? "Overview"} · Flyball` }];
export { ErrorBoundary } from "~/components/route-error";
