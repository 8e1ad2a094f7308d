import { useEffect } from "react";
import { data, Form, Link, useNavigation, useRevalidator } from "react-router";
import { z } from "zod";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { getRelease, holdRelease, resumeRelease, rollbackRelease } from "~/.server/releases/releases";
import { requireGainSetForRelease } from "~/.server/releases/targets";
import { formatDateTime } from "~/components/fleet/format";
import { LiveChangeCaution } from "~/components/live-change-caution";
import { PageHeader } from "~/components/org-shell";
import { GuardFigures, ReleaseStateBadge, TargetStateWord, WaveProgress } from "~/components/releases/release-parts";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import { DomainError } from "~/lib/errors";
import type { Route } from "./+types/release";

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

async function load(organisationId: string, id: string) {
  if (!UUID.test(id)) throw data({ message: "No such release." }, { status: 404 });
  try {
    return await getRelease(getDb(), { organisationId, releaseId: id });
  } catch (error) {
    if (error instanceof DomainError && error.status === 404) throw data({ message: "No such release." }, { status: 404 });
    throw error;
  }
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:read");
  const release = await load(membership.organisation.id, params.id);
  const gainSet = await requireGainSetForRelease(getDb(), { organisationId: membership.organisation.id, gainSetId: release.gainSetId });
  return { release, gainSet, slug: membership.organisation.slug, canOperate: can(membership.role, "release:operate") };
}

const CommandSchema = z.object({ intent: z.enum(["hold", "resume", "rollback"]), reason: z.string().trim().max(500).optional() });

type ActionResult = { ok: true; message: string } | { ok: false; message: string; field?: string };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "release:operate");
  await load(membership.organisation.id, params.id);
  const parsed = CommandSchema.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data<ActionResult>({ ok: false, message: "Unknown command." }, { status: 400 });
  const ctx = { organisationId: membership.organisation.id, releaseId: params.id, actor: membership.user.id };
  try {
    if (parsed.data.intent === "hold") {
      await holdRelease(getDb(), { ...ctx, reason: `Held by ${membership.user.name}${parsed.data.reason ? `: ${parsed.data.reason}` : "."}` });
      return data<ActionResult>({ ok: true, message: "The release is held: nothing more is offered until you resume or roll back." });
    }
    if (parsed.data.intent === "resume") {
      await resumeRelease(getDb(), ctx);
      return data<ActionResult>({ ok: true, message: "Resumed: the remaining waves are offered now." });
    }
    await rollbackRelease(getDb(), ctx);
    return data<ActionResult>({ ok: true, message: "Rolled back: every loop that had these gains is offered its previous gains under a new version." });
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

export default function ReleasePage({ loaderData, actionData }: Route.ComponentProps) {
  const { release, gainSet, slug, canOperate } = loaderData;
  const busy = useNavigation().state === "submitting";
  const revalidator = useRevalidator();
  const moving = release.state === "piloting" || release.state === "widening";
  useEffect(() => {
    if (!moving) return;
    const timer = setInterval(() => revalidator.state === "idle" && revalidator.revalidate(), 5000);
    return () => clearInterval(timer);
  }, [moving, revalidator]);
  const rolledBack = release.targets.filter((t) => t.rollback);
  return (
    <>
      <PageHeader
        title={`Release of ${gainSet.templateKey} v${gainSet.version}`}
        crumbs={[{ label: "Releases", to: `/o/${slug}/releases` }, { label: `${gainSet.templateKey} v${gainSet.version}` }]}
        description={
          <span className="inline-flex flex-wrap items-center gap-2">
            <ReleaseStateBadge state={release.state} />
            <span>
              {release.machineCount} machine{release.machineCount === 1 ? "" : "s"}, {release.targets.length} loop{release.targets.length === 1 ? "" : "s"} · started {formatDateTime(release.startedAt ?? release.createdAt)}
              {release.state === "piloting" && release.guardEndsAt ? ` · guard window ends ${formatDateTime(release.guardEndsAt)}` : ""}
            </span>
          </span>
        }
      />
      <div className="grid gap-6 px-5 py-6 sm:px-8 lg:grid-cols-[minmax(0,1fr)_22rem]">
        <div className="min-w-0 space-y-6">
          {actionData ? <Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice> : null}
          {release.state === "held" ? (
            <Notice tone="error" title="Held — waiting for a decision">
              {release.heldReason} Resume to offer the remaining waves, or roll back to give every loop that took these gains its previous ones.
            </Notice>
          ) : null}
          <section aria-labelledby="waves-title" className="space-y-4 rounded-xl border border-rule bg-white p-5">
            <h2 id="waves-title" className="text-base font-semibold text-ink">Waves</h2>
            {release.waves.map((w) => <WaveProgress key={w.index} index={w.index} state={w.state} counts={w.counts} />)}
            {rolledBack.length ? (
              <p className="text-sm text-ink-soft">
                Roll back: {rolledBack.filter((t) => t.rollback!.state === "applied").length} of {rolledBack.length} loops back on their previous gains.
              </p>
            ) : null}
          </section>
          <section aria-labelledby="targets-title" className="rounded-xl border border-rule bg-white">
            <h2 id="targets-title" className="px-5 pt-4 text-base font-semibold text-ink">Loops</h2>
            <div role="region" aria-label="Loops in this release" tabIndex={0} className="mt-2 max-h-[28rem] overflow-auto">
              <table className="w-full text-sm">
                <thead className="sticky top-0 bg-paper-deep text-left text-xs text-ink-soft">
                  <tr>
                    <th scope="col" className="px-3 py-2 font-medium">Machine</th>
                    <th scope="col" className="px-3 py-2 font-medium">Loop</th>
                    <th scope="col" className="px-3 py-2 text-right font-medium">Wave</th>
                    <th scope="col" className="px-3 py-2 font-medium">State</th>
                    <th scope="col" className="px-3 py-2 text-right font-medium">Version</th>
                    <th scope="col" className="px-3 py-2 font-medium">Roll back</th>
                  </tr>
                </thead>
                <tbody>
                  {release.targets.map((t) => (
                    <tr key={t.loopId} className="border-t border-rule">
                      <td className="whitespace-nowrap px-3 py-1.5"><Link to={`/o/${slug}/machines/${t.machineId}`} className="text-accent hover:underline">{t.serial}</Link></td>
                      <td className="px-3 py-1.5 font-mono text-xs">{t.loopKey}</td>
                      <td className="px-3 py-1.5 text-right tabular-nums">{t.wave + 1}</td>
                      <td className="px-3 py-1.5" title={t.rejectReason ?? undefined}><TargetStateWord state={t.state} />{t.rejectReason ? <span className="ml-1 text-xs text-ink-faint">({t.rejectReason})</span> : null}</td>
                      <td className="px-3 py-1.5 text-right tabular-nums">{t.version ?? "—"}</td>
                      <td className="px-3 py-1.5">{t.rollback ? <><TargetStateWord state={t.rollback.state} /> <span className="tabular-nums text-ink-faint">v{t.rollback.version}</span></> : <span className="text-ink-faint">—</span>}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
            <p className="border-t border-rule px-3 py-2 text-xs text-ink-faint">{release.targets.length} loops</p>
          </section>
        </div>
        <aside className="space-y-6">
          <section aria-labelledby="guard-title" className="rounded-xl border border-rule bg-white p-5">
            <h2 id="guard-title" className="text-base font-semibold text-ink">Guard</h2>
            <p className="mt-1 text-sm text-ink-soft">Window {release.guard.windowMinutes} min. {release.guard.rule}</p>
            <div className="mt-3"><GuardFigures figures={release.figures} /></div>
          </section>
          <section aria-labelledby="gains-title" className="rounded-xl border border-rule bg-white p-5 text-sm">
            <h2 id="gains-title" className="text-base font-semibold text-ink">Gains released</h2>
            <p className="mt-1 tabular-nums text-ink">kp {gainSet.gains.kp.toPrecision(4)} · ki {gainSet.gains.ki.toPrecision(4)} <span className="text-ink-faint">1/s</span> · kd {gainSet.gains.kd.toPrecision(4)} <span className="text-ink-faint">s</span></p>
          </section>
          {canOperate && release.state !== "rolled_back" ? (
            <section aria-labelledby="decide-title" className="space-y-3 rounded-xl border border-rule bg-white p-5">
              <h2 id="decide-title" className="text-base font-semibold text-ink">Decide</h2>
              {["pending", "piloting", "widening"].includes(release.state) ? (
                <Form method="post" className="space-y-2">
                  <input type="hidden" name="intent" value="hold" />
                  <Field label="Why hold" name="reason" help="Optional; goes into the e-mail and the audit log." maxLength={500} />
                  <Button type="submit" variant="secondary" disabled={busy}>Hold the release</Button>
                </Form>
              ) : null}
              {release.state === "held" ? (
                <Form method="post">
                  <input type="hidden" name="intent" value="resume" />
                  <LiveChangeCaution step="release" className="mb-2" />
                  <Button type="submit" disabled={busy}>Resume and widen</Button>
                </Form>
              ) : null}
              <Form method="post">
                <input type="hidden" name="intent" value="rollback" />
                <LiveChangeCaution step="rollback" className="mb-2" />
                <Button type="submit" variant="danger" disabled={busy}>Roll back</Button>
              </Form>
            </section>
          ) : null}
        </aside>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Release · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
