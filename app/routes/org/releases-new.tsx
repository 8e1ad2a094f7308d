import { data, Form, Link, redirect, useNavigation } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { requireActiveSubscription } from "~/.server/billing/enforce";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { listReleasableGainSets, listTargetOptions } from "~/.server/releases/options";
import { createRelease, previewRelease } from "~/.server/releases/releases";
import { requireGainSetForRelease } from "~/.server/releases/targets";
import { LiveChangeCaution } from "~/components/live-change-caution";
import { PageHeader } from "~/components/org-shell";
import { Button, buttonClass } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { DomainError } from "~/lib/errors";
import { CreateReleaseSchema } from "~/lib/release/schemas";
import type { ReleaseTargetSpec } from "~/lib/release/types";
import type { Route } from "./+types/releases-new";

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

function targetFrom(params: URLSearchParams | FormData): ReleaseTargetSpec {
  const ids = (name: string) => params.getAll(name).map(String).filter((v) => UUID.test(v));
  if (params.get("scope") !== "pick") return { all: true };
  return { machineIds: ids("machineId"), siteIds: ids("siteId"), customerIds: ids("customerId") };
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "release:operate");
  const organisationId = membership.organisation.id;
  const db = getDb();
  const url = new URL(request.url);
  const gainSets = await listReleasableGainSets(db, { organisationId });
  const gainSetId = url.searchParams.get("gainSetId") ?? "";
  const base = { slug: membership.organisation.slug, gainSets, gainSetId, chosen: null, options: null, preview: null, previewError: null };
  if (!UUID.test(gainSetId)) return base;
  let set;
  try {
    set = await requireGainSetForRelease(db, { organisationId, gainSetId });
  } catch (error) {
    if (error instanceof DomainError && error.status === 404) return { ...base, gainSetId: "" };
    throw error;
  }
  const options = await listTargetOptions(db, { organisationId, modelId: set.modelId });
  const target = targetFrom(url.searchParams);
  const picked = target.all || (target.machineIds!.length + target.siteIds!.length + target.customerIds!.length > 0);
  let preview = null;
  let previewError: string | null = null;
  if (picked) {
    try {
      preview = await previewRelease(db, { organisationId, gainSetId, target });
    } catch (error) {
      if (!(error instanceof DomainError)) throw error;
      previewError = error.message;
    }
  }
  return { ...base, chosen: { id: set.id, version: set.version, state: set.state, gains: set.gains, templateKey: set.templateKey, templateName: set.templateName }, options, target, preview, previewError };
}

type ActionResult = { ok: false; message: string; field?: string };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "release:operate");
  const form = await request.formData();
  const num = (name: string) => {
    const v = String(form.get(name) ?? "").trim();
    return v === "" ? undefined : Number(v);
  };
  const percent = (name: string) => {
    const v = num(name);
    return v === undefined ? undefined : v / 100;
  };
  const pilotMachineIds = form.getAll("pilotMachineId").map(String).filter((v) => UUID.test(v));
  const input = CreateReleaseSchema.safeParse({
    gainSetId: String(form.get("gainSetId") ?? ""),
    target: targetFrom(form),
    pilot: pilotMachineIds.length ? { machineIds: pilotMachineIds } : { share: percent("pilotShare") },
    guard: { windowMinutes: num("windowMinutes"), maxIaeIncrease: percent("maxIaeIncrease"), maxRejectShare: percent("maxRejectShare") },
    confirmMachineCount: num("confirmMachineCount") ?? -1,
  });
  if (!input.success) {
    const issue = input.error.issues[0];
    return data<ActionResult>({ ok: false, message: `${issue.path.join(" ")}: ${issue.message}` }, { status: 400 });
  }
  try {
    await requireActiveSubscription(getDb(), membership.organisation.id);
    const created = await createRelease(getDb(), { organisationId: membership.organisation.id, actor: membership.user.id, input: input.data });
    return redirect(`/o/${membership.organisation.slug}/releases/${created.id}`);
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

const box = "space-y-3 rounded-xl border border-rule bg-white p-5";

export default function NewRelease({ loaderData, actionData }: Route.ComponentProps) {
  const { slug, gainSets, gainSetId, chosen, options, preview, previewError } = loaderData;
  const target = "target" in loaderData ? loaderData.target : undefined;
  const busy = useNavigation().state !== "idle";
  const checked = (list: string[] | undefined, id: string) => list?.includes(id) ?? false;
  return (
    <>
      <PageHeader title="Start a release" crumbs={[{ label: "Releases", to: `/o/${slug}/releases` }, { label: "New" }]} description="Choose an approved gain set and where it goes, look at what it reaches, then start it with a pilot and a guard." />
      <div className="max-w-3xl space-y-5 px-5 py-6 sm:px-8">
        <Form method="get" className={box}>
          <h2 className="text-base font-semibold text-ink">1. Gain set and target</h2>
          {gainSets.length === 0 && !chosen ? (
            <Notice tone="info" title="No approved gain set">A gain set must be proposed and approved by a second engineer before it can be released.</Notice>
          ) : (
            <label className="block text-sm font-medium text-ink">
              Approved gain set
              <select name="gainSetId" defaultValue={gainSetId} className="mt-1 block w-full rounded-md border border-rule-strong bg-white px-3 py-2 text-sm">
                <option value="">Choose…</option>
                {gainSets.map((g) => <option key={g.id} value={g.id}>{g.modelName} · {g.templateName} ({g.templateKey}) v{g.version}</option>)}
              </select>
            </label>
          )}
          {chosen && chosen.state !== "approved" ? <Notice tone="error" title={`v${chosen.version} is ${chosen.state}`}>Only an approved gain set can be released.</Notice> : null}
          {options ? (
            <fieldset className="space-y-2">
              <legend className="text-sm font-medium text-ink">Target</legend>
              <label className="flex items-center gap-2 text-sm"><input type="radio" name="scope" value="all" defaultChecked={!target || target.all === true} /> Every active machine of the model ({options.machines.length})</label>
              <label className="flex items-center gap-2 text-sm"><input type="radio" name="scope" value="pick" defaultChecked={target?.all !== true && !!target} /> Only the customers, sites or machines ticked below</label>
              <div className="grid gap-3 sm:grid-cols-3">
                <div role="group" aria-label="Customers" className="space-y-1 text-sm">
                  <p className="text-xs font-medium text-ink-soft">Customers</p>
                  {options.customers.map((c) => <label key={c.id} className="flex items-center gap-2"><input type="checkbox" name="customerId" value={c.id} defaultChecked={checked(target?.customerIds, c.id)} />{c.name}</label>)}
                </div>
                <div role="group" aria-label="Sites" className="space-y-1 text-sm">
                  <p className="text-xs font-medium text-ink-soft">Sites</p>
                  {options.sites.map((s) => <label key={s.id} className="flex items-center gap-2"><input type="checkbox" name="siteId" value={s.id} defaultChecked={checked(target?.siteIds, s.id)} />{s.customerName}: {s.name}</label>)}
                </div>
                <div role="region" aria-label="Machines" tabIndex={0} className="max-h-48 space-y-1 overflow-auto text-sm">
                  <p className="text-xs font-medium text-ink-soft">Machines</p>
                  {options.machines.map((m) => <label key={m.id} className="flex items-center gap-2"><input type="checkbox" name="machineId" value={m.id} defaultChecked={checked(target?.machineIds, m.id)} />{m.serial}</label>)}
                </div>
              </div>
            </fieldset>
          ) : null}
          <Button type="submit" variant="secondary" disabled={busy}>{options ? "Preview the target" : "Choose"}</Button>
        </Form>

        {previewError ? <Notice tone="error">{previewError}</Notice> : null}
        {preview && chosen ? (
          <>
            <section aria-labelledby="preview-title" className={box}>
              <h2 id="preview-title" className="text-base font-semibold text-ink">2. What it reaches</h2>
              <p className="text-sm text-ink-soft">
                <strong className="tabular-nums text-ink">{preview.machineCount}</strong> machines, <strong className="tabular-nums text-ink">{preview.loopCount}</strong> {chosen.templateKey} loops. New gains: kp {chosen.gains.kp.toPrecision(4)} · ki {chosen.gains.ki.toPrecision(4)} 1/s · kd {chosen.gains.kd.toPrecision(4)} s.
              </p>
              <div role="region" aria-label="Target preview" tabIndex={0} className="max-h-72 overflow-auto rounded-md border border-rule">
                <table className="w-full text-sm">
                  <thead className="sticky top-0 bg-paper-deep text-left text-xs text-ink-soft">
                    <tr>
                      <th scope="col" className="px-3 py-1.5 font-medium">Machine</th>
                      <th scope="col" className="px-3 py-1.5 font-medium">Site</th>
                      <th scope="col" className="px-3 py-1.5 text-right font-medium">Version now</th>
                      <th scope="col" className="px-3 py-1.5 text-right font-medium">Applied</th>
                      <th scope="col" className="px-3 py-1.5 text-right font-medium">kp / ki / kd now</th>
                    </tr>
                  </thead>
                  <tbody>
                    {preview.machines.flatMap((m) => m.loops.map((l) => (
                      <tr key={l.loopId} className="border-t border-rule">
                        <td className="px-3 py-1.5">{m.serial}</td>
                        <td className="px-3 py-1.5 text-ink-soft">{m.customerName}: {m.siteName}</td>
                        <td className="px-3 py-1.5 text-right tabular-nums">{l.configVersion}</td>
                        <td className="px-3 py-1.5 text-right tabular-nums">{l.appliedVersion ?? "—"}</td>
                        <td className="px-3 py-1.5 text-right tabular-nums">{l.gains.kp.toPrecision(4)} / {l.gains.ki.toPrecision(4)} / {l.gains.kd.toPrecision(4)}</td>
                      </tr>
                    )))}
                  </tbody>
                </table>
              </div>
            </section>
            <Form method="post" className={box}>
              <h2 className="text-base font-semibold text-ink">3. Pilot, guard and start</h2>
              <input type="hidden" name="gainSetId" value={chosen.id} />
              <input type="hidden" name="scope" value={target?.all ? "all" : "pick"} />
              {target?.customerIds?.map((id) => <input key={id} type="hidden" name="customerId" value={id} />)}
              {target?.siteIds?.map((id) => <input key={id} type="hidden" name="siteId" value={id} />)}
              {target?.machineIds?.map((id) => <input key={id} type="hidden" name="machineId" value={id} />)}
              <fieldset className="space-y-1 text-sm">
                <legend className="text-sm font-medium text-ink">Pilot machines</legend>
                <p className="text-xs text-ink-faint">Tick the machines that get it first, or leave all unticked and give a share below.</p>
                <div role="region" aria-label="Pilot machines" tabIndex={0} className="grid max-h-40 gap-1 overflow-auto sm:grid-cols-3">
                  {preview.machines.map((m) => <label key={m.machineId} className="flex items-center gap-2"><input type="checkbox" name="pilotMachineId" value={m.machineId} />{m.serial}</label>)}
                </div>
              </fieldset>
              <Field label="Pilot share" name="pilotShare" type="number" min={1} max={100} step={1} defaultValue={10} unit="%" help="Used when no pilot machine is ticked: this share of the target, at least one machine, spread across it." />
              <Field label="Guard window" name="windowMinutes" type="number" min={1} max={10080} step={1} defaultValue={60} unit="min" required help="How long the pilot runs before the release widens (1 to 10 080 minutes)." />
              <Field label="Largest IAE increase over the control group" name="maxIaeIncrease" type="number" min={1} max={1000} step={1} defaultValue={20} unit="%" help="Median ratio of IAE per second after / before, pilot loops against loops of the same template outside the release." />
              <Field label="Largest share of pilot devices rejecting" name="maxRejectShare" type="number" min={0} max={100} step={1} defaultValue={10} unit="%" />
              <LiveChangeCaution step="release" />
              <Field label={`Type the number of machines this release will reach (${preview.machineCount})`} name="confirmMachineCount" type="number" inputMode="numeric" required autoComplete="off" help="Starting needs this number typed, so nobody starts a release wider than they meant." />
              {actionData && !actionData.ok ? <Notice tone="error">{actionData.message}</Notice> : null}
              <div className="flex gap-2">
                <Button type="submit" disabled={busy || chosen.state !== "approved"}>Start the release</Button>
                <Link to={`/o/${slug}/releases`} className={buttonClass("secondary")}>Cancel</Link>
              </div>
            </Form>
          </>
        ) : null}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Start a release · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
