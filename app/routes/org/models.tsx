import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listModels } from "~/.server/fleet/registry";
import { formatSig } from "~/components/fleet/format";
import { PageHeader } from "~/components/org-shell";
import type { Route } from "./+types/models";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:manage");
  return { models: (await listModels(getDb(), { organisationId: membership.organisation.id, page: 1, pageSize: 200 })).items };
}

const range = (r: [number, number]) => `${formatSig(r[0])} … ${formatSig(r[1])}`;

export default function Models({ loaderData }: Route.ComponentProps) {
  const { models } = loaderData;
  return (
    <>
      <PageHeader title="Models & loops" description="Each machine model's loop templates: what every machine of the model controls, its output range, the gains it starts with and the envelope any new gains must stay inside." />
      <div className="space-y-6 px-5 py-6 sm:px-8">
        {models.length === 0 ? (
          <p className="rounded-xl border border-dashed border-rule bg-white px-5 py-6 text-sm text-ink-soft">No machine models yet. Models are loaded with the fleet registry; ask your admin to add your product lines.</p>
        ) : null}
        {models.map((m) => (
          <section key={m.id} className="rounded-xl border border-rule bg-white">
            <div className="border-b border-rule px-4 py-3">
              <h2 className="font-semibold">{m.name} <span className="text-xs font-normal text-ink-faint tabular">{m.machineCount} machines</span></h2>
              {m.description ? <p className="text-sm text-ink-soft">{m.description}</p> : null}
            </div>
            <div role="region" tabIndex={0} aria-label={`Loop templates of ${m.name}`} className="overflow-x-auto">
              <table className="w-full min-w-[60rem] text-sm">
                <thead className="bg-paper text-left text-xs uppercase tracking-wide text-ink-faint">
                  <tr>
                    <th className="px-3 py-2 font-medium">Loop</th>
                    <th className="px-3 py-2 text-right font-medium">Sample period</th>
                    <th className="px-3 py-2 text-right font-medium">Output range</th>
                    <th className="px-3 py-2 text-right font-medium">kp</th>
                    <th className="px-3 py-2 text-right font-medium">ki</th>
                    <th className="px-3 py-2 text-right font-medium">kd</th>
                    <th className="px-3 py-2 font-medium">Envelope kp / ki / kd</th>
                    <th className="px-3 py-2 text-right font-medium">Saturation watch / act</th>
                  </tr>
                </thead>
                <tbody className="divide-y divide-rule">
                  {m.loopTemplates.map((t) => (
                    <tr key={t.id}>
                      <td className="px-3 py-1.5"><span className="font-medium">{t.name}</span> <span className="font-mono text-xs text-ink-faint">{t.key}</span> <span className="text-xs text-ink-faint">{t.unit}</span></td>
                      <td className="px-3 py-1.5 text-right tabular">{formatSig(t.samplePeriodS, 3)}<span className="ml-0.5 text-ink-faint">s</span></td>
                      <td className="px-3 py-1.5 text-right tabular">{formatSig(t.outputMin)} – {formatSig(t.outputMax)}<span className="ml-0.5 text-ink-faint">{t.outputUnit}</span></td>
                      <td className="px-3 py-1.5 text-right tabular">{formatSig(t.defaultGains.kp)}</td>
                      <td className="px-3 py-1.5 text-right tabular">{formatSig(t.defaultGains.ki)}<span className="ml-0.5 text-ink-faint">/s</span></td>
                      <td className="px-3 py-1.5 text-right tabular">{formatSig(t.defaultGains.kd)}<span className="ml-0.5 text-ink-faint">s</span></td>
                      <td className="px-3 py-1.5 tabular text-ink-soft">{range(t.gainEnvelope.kp)} / {range(t.gainEnvelope.ki)} / {range(t.gainEnvelope.kd)}</td>
                      <td className="px-3 py-1.5 text-right tabular">{Math.round(t.thresholds.saturationWatch * 100)} / {Math.round(t.thresholds.saturationAct * 100)}<span className="ml-0.5 text-ink-faint">%</span></td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          </section>
        ))}
        <p className="text-xs text-ink-faint">Saturation and clamped-integrator limits have no single published value; the defaults are practice and are set per loop template.</p>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Models & loops · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
