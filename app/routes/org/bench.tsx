import { data } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { DraftGainSetSchema, listBenchTemplates, saveDraftGainSet } from "~/.server/tuning/gain-sets";
import { TuningBench } from "~/components/bench/tuning-bench";
import { PageHeader } from "~/components/org-shell";
import type { Route } from "./+types/bench";

// The bench computes in the browser; the loader proves the caller may tune here and lists
// the loop templates a draft can be saved for.
export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "tuning:use");
  return { templates: await listBenchTemplates(getDb(), { organisationId: membership.organisation.id }) };
}

export type SaveDraftResult = { ok: true; id: string; version: number; templateKey: string } | { ok: false; message: string; field?: string };

// Saving a draft: the form carries one field, `draft`, holding the JSON of DraftGainSetSchema.
export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "tuning:use");
  const form = await request.formData();
  let value: unknown;
  try {
    value = JSON.parse(String(form.get("draft") ?? ""));
  } catch {
    return data<SaveDraftResult>({ ok: false, message: "The draft could not be read." }, { status: 400 });
  }
  const parsed = DraftGainSetSchema.safeParse(value);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    return data<SaveDraftResult>({ ok: false, message: `${issue?.path.join(".") || "draft"}: ${issue?.message ?? "is not valid"}`, field: String(issue?.path[0] ?? "") }, { status: 400 });
  }
  try {
    const saved = await saveDraftGainSet(getDb(), { organisationId: membership.organisation.id, actor: membership.user.id, input: parsed.data });
    return data<SaveDraftResult>({ ok: true, id: saved.id, version: saved.version, templateKey: saved.templateKey });
  } catch (error) {
    return actionFailure<SaveDraftResult>(error);
  }
}

export default function BenchPage({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader
        title="Tuning bench"
        description="Fit a model to a step test, compare every tuning rule on the sampled loop, and try gains before they go anywhere near a machine."
      />
      <div className="px-4 py-5 sm:px-8">
        <TuningBench templates={loaderData.templates} />
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Tuning bench · Flyball" }];

export { ErrorBoundary } from "~/components/route-error";
