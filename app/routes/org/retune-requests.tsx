// Retune requests: site managers follow the requests they filed (state and the engineers'
// comments); engineers work the queue and move each request on with a comment.
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { requireCapability, requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { getSiteScope } from "~/.server/fleet/scope";
import { listRetuneRequests, setRetuneRequestState } from "~/.server/health/retune";
import { actionFailure } from "~/.server/http/errors";
import { formatAgo, formatDateTime } from "~/components/fleet/format";
import { RetuneStateBadge } from "~/components/health/retune-badge";
import { RETUNE_NEXT, RETUNE_STATE_LABELS } from "~/components/health/words";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { can } from "~/lib/access/capabilities";
import { RETUNE_STATES, RetuneStateSchema, type RetuneRequest } from "~/lib/health/api-types";
import type { Route } from "./+types/retune-requests";

/** Who works the queue: the OEM's engineers and up (the server checks the same capability). */
const QUEUE_CAPABILITY = "tuning:use" as const;

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "fleet:read");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const stateParam = new URL(request.url).searchParams.get("state");
  const state = z.enum(RETUNE_STATES).safeParse(stateParam);
  const requests = await listRetuneRequests(db, scope, { state: state.success ? state.data : undefined, page: 1, pageSize: 100 });
  return {
    requests,
    state: state.success ? state.data : null,
    slug: membership.organisation.slug,
    canMove: can(membership.role, QUEUE_CAPABILITY),
    isRequester: can(membership.role, "retune:request"),
  };
}

type ActionResult = { ok: boolean; message: string; id?: string };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = requireCapability(await requireCapableMember(request, params.slug, "fleet:read"), QUEUE_CAPABILITY);
  const form = Object.fromEntries(await request.formData());
  const id = z.string().uuid().safeParse(form.id);
  if (!id.success) return data<ActionResult>({ ok: false, message: "No such retune request." }, { status: 404 });
  const parsed = RetuneStateSchema.safeParse({ state: form.state, comment: form.comment ?? "" });
  if (!parsed.success) return data<ActionResult>({ ok: false, id: id.data, message: parsed.error.issues[0].message }, { status: 400 });
  const db = getDb();
  try {
    await setRetuneRequestState(db, await getSiteScope(db, membership), membership.user.id, id.data, parsed.data);
    return data<ActionResult>({ ok: true, id: id.data, message: `Moved to "${RETUNE_STATE_LABELS[parsed.data.state]}". The site manager sees your comment.` });
  } catch (error) {
    const failure = actionFailure<ActionResult>(error);
    return data<ActionResult>({ ...failure.data, id: id.data }, failure.init ?? undefined);
  }
}

function RequestCard({ r, slug, canMove, result, busy }: { r: RetuneRequest; slug: string; canMove: boolean; result: ActionResult | undefined; busy: boolean }) {
  const next = RETUNE_NEXT[r.state];
  // The first entry is the request itself (its observation); the rest are the engineers' moves.
  const answers = r.history.filter((h, i) => !(i === 0 && h.state === "open"));
  const mine = result?.id === r.id ? result : undefined;
  return (
    <li className="rounded-xl border border-rule bg-white p-4" aria-labelledby={`req-${r.id}`}>
      <div className="flex flex-wrap items-center justify-between gap-2">
        <h2 id={`req-${r.id}`} className="font-semibold">
          <Link to={`/o/${slug}/machines/${r.machineId}${r.loopId ? `?loop=${r.loopId}` : ""}`} className="text-accent hover:underline">{r.machineSerial}</Link>
          <span className="ml-2 text-sm font-normal text-ink-soft">{r.loopKey ? `loop ${r.loopKey}` : "whole machine"}</span>
        </h2>
        <RetuneStateBadge state={r.state} />
      </div>
      <p className="mt-1 text-xs text-ink-faint">Filed {formatDateTime(r.createdAt)}{r.requestedBy ? ` by ${r.requestedBy}` : ""} · updated {formatAgo(r.updatedAt)}</p>
      <blockquote className="mt-2 border-l-2 border-rule-strong pl-3 text-sm">{r.observation}</blockquote>
      {answers.length ? (
        <ol className="mt-3 space-y-1.5 text-sm" aria-label="Answers">
          {answers.map((h, i) => (
              <li key={`${h.at}-${i}`} className="rounded-md bg-paper px-3 py-1.5">
                <p className="text-xs text-ink-faint">
                  <span className="font-medium text-ink-soft">{RETUNE_STATE_LABELS[h.state]}</span> · {formatDateTime(h.at)} · {h.actorName ?? "Flyball"}
                </p>
                {h.comment ? <p>{h.comment}</p> : null}
              </li>
            ))}
        </ol>
      ) : null}
      {mine ? <div className="mt-2"><Notice tone={mine.ok ? "success" : "error"}>{mine.message}</Notice></div> : null}
      {canMove && next.length ? (
        <Form method="post" className="mt-3 flex flex-wrap items-end gap-2">
          <input type="hidden" name="id" value={r.id} />
          <label className="flex flex-col text-xs text-ink-faint">
            Move to
            <select name="state" defaultValue={next[0]} className="rounded-md border border-rule-strong bg-white px-2 py-1.5 text-sm text-ink">
              {next.map((s) => <option key={s} value={s}>{RETUNE_STATE_LABELS[s]}</option>)}
            </select>
          </label>
          <label className="flex min-w-56 flex-1 flex-col text-xs text-ink-faint">
            Comment for the site manager
            <input name="comment" required maxLength={2000} placeholder="e.g. Looking at zone 2 this week" className="rounded-md border border-rule-strong bg-white px-2 py-1.5 text-sm text-ink" />
          </label>
          <Button variant="secondary" className="py-1.5" disabled={busy}>Update</Button>
        </Form>
      ) : null}
    </li>
  );
}

export default function RetuneRequestsPage({ loaderData, actionData }: Route.ComponentProps) {
  const { requests, state, slug, canMove, isRequester } = loaderData;
  const busy = useNavigation().state === "submitting";
  return (
    <>
      <PageHeader
        title="Retune requests"
        description={
          isRequester
            ? "Requests you sent to the machine builder's engineers, their state and the engineers' answers. File a new one from a machine's page."
            : "Site managers' requests to look at a machine's loops. Move each one on with a comment: the site manager sees it."
        }
      />
      <div className="space-y-4 px-5 py-5 sm:px-8">
        <nav aria-label="Filter by state" className="flex flex-wrap gap-1.5 text-sm">
          {[null, ...RETUNE_STATES].map((s) => (
            <Link
              key={s ?? "all"}
              to={s ? `?state=${s}` : "?"}
              aria-current={s === state ? "page" : undefined}
              className={`rounded-md border px-2.5 py-1 ${s === state ? "border-accent bg-accent-wash font-medium text-accent-strong" : "border-rule bg-white text-ink-soft hover:bg-paper-deep"}`}
            >
              {s ? RETUNE_STATE_LABELS[s] : "All"}
            </Link>
          ))}
        </nav>
        <p className="text-xs text-ink-faint tabular" aria-live="polite">{requests.total} {requests.total === 1 ? "request" : "requests"}</p>
        {requests.items.length === 0 ? (
          <div className="rounded-xl border border-dashed border-rule bg-white px-5 py-8 text-sm text-ink-soft">
            {isRequester ? (
              <>You have not asked for a retune{state ? " in this state" : ""} yet. Open a <Link to={`/o/${slug}/machines`} className="link-in-text">machine</Link> and use "Ask the OEM for a retune" to describe what you observe.</>
            ) : (
              <>No retune requests{state ? " in this state" : ""}. Site managers file them from a machine's page.</>
            )}
          </div>
        ) : (
          <ul className="space-y-3">
            {requests.items.map((r) => (
              <RequestCard key={r.id} r={r} slug={slug} canMove={canMove} result={actionData as ActionResult | undefined} busy={busy} />
            ))}
          </ul>
        )}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Retune requests · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
