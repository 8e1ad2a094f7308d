import { requireCapableMember } from "~/.server/auth/guards";
import { TuningBench } from "~/components/bench/tuning-bench";
import { PageHeader } from "~/components/org-shell";
import type { Route } from "./+types/bench";

// The bench computes in the browser; the loader only proves the caller may tune here.
export async function loader({ request, params }: Route.LoaderArgs) {
  await requireCapableMember(request, params.slug, "tuning:use");
  return null;
}

export default function BenchPage() {
  return (
    <>
      <PageHeader
        title="Tuning bench"
        description="Fit a model to a step test, compare every tuning rule on the sampled loop, and try gains before they go anywhere near a machine."
      />
      <div className="px-4 py-5 sm:px-8">
        <TuningBench />
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Tuning bench · Flyball" }];

export { ErrorBoundary } from "~/components/route-error";
