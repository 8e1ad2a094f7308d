import type { FopdtModel } from "~/lib/control";
import type { ModelEstimate } from "~/lib/compute/bench";
import { formatGain, formatNumber, formatTime } from "./format";
import { Value } from "./value";

export type ModelSource = "least-squares" | "smith" | "sundaresan-krishnaswamy" | "typed";

export const MODEL_SOURCE_LABELS: Record<ModelSource, string> = {
  "least-squares": "Least-squares fit",
  smith: "Smith two-point",
  "sundaresan-krishnaswamy": "Sundaresan–Krishnaswamy two-point",
  typed: "Typed model",
};

const HELP: Record<ModelSource, string> = {
  "least-squares": "Fitted to every sample by the server. Trust this one on noisy data.",
  smith: "From the 28 % and 63 % crossing times of the smoothed response; on noisy data prefer the fit.",
  "sundaresan-krishnaswamy": "From the 35 % and 85 % crossing times of the smoothed response; on noisy data prefer the fit.",
  typed: "The gain, time constant and dead time you typed.",
};

export type ModelCandidate = { source: ModelSource; estimate: ModelEstimate | "pending" };

export function ModelSummary({ model, units }: { model: FopdtModel; units: { value: string; output: string } }) {
  return (
    <dl className="flex flex-wrap gap-x-4 gap-y-0.5 text-sm">
      <div className="flex items-baseline gap-1.5">
        <dt className="text-xs text-ink-faint">K</dt>
        <dd>
          <Value unit={`${units.value}/${units.output}`}>{formatGain(model.gain)}</Value>
        </dd>
      </div>
      <div className="flex items-baseline gap-1.5">
        <dt className="text-xs text-ink-faint">τ</dt>
        <dd>
          <Value unit="s">{formatTime(model.timeConstant)}</Value>
        </dd>
      </div>
      <div className="flex items-baseline gap-1.5">
        <dt className="text-xs text-ink-faint">θ</dt>
        <dd>
          <Value unit="s">{formatTime(model.deadTime)}</Value>
        </dd>
      </div>
    </dl>
  );
}

/** The models the engineer may tune from, one to pick. */
export function ModelPicker({
  candidates,
  chosen,
  onChoose,
  units,
}: {
  candidates: ModelCandidate[];
  chosen: ModelSource;
  onChoose: (source: ModelSource) => void;
  units: { value: string; output: string };
}) {
  return (
    <fieldset>
      <legend className="text-sm font-medium text-ink">Tune from</legend>
      <div className="mt-2 grid gap-2 sm:grid-cols-2 xl:grid-cols-1">
        {candidates.map(({ source, estimate }) => {
          const usable = estimate !== "pending" && estimate.ok;
          const selected = chosen === source;
          return (
            <label
              key={source}
              data-testid={`model-${source}`}
              className={`block rounded-md border px-3 py-2.5 ${usable ? "cursor-pointer" : "opacity-80"} ${selected ? "border-accent bg-accent-wash/60 ring-1 ring-accent" : "border-rule bg-white hover:border-ink-faint"}`}
            >
              <span className="flex items-start gap-2">
                <input
                  type="radio"
                  name="model-source"
                  value={source}
                  checked={selected}
                  disabled={!usable}
                  onChange={() => onChoose(source)}
                  className="mt-0.5 accent-[var(--color-accent)]"
                />
                <span className="min-w-0 flex-1">
                  <span className="block text-sm font-medium">{MODEL_SOURCE_LABELS[source]}</span>
                  <span className="block text-xs text-ink-faint">{HELP[source]}</span>
                </span>
              </span>
              <span className="mt-2 block pl-6">
                {estimate === "pending" ? (
                  <span className="text-xs text-ink-soft">Waiting for the fit…</span>
                ) : estimate.ok ? (
                  <>
                    <ModelSummary model={estimate.model} units={units} />
                    {source !== "typed" ? (
                      <span className="mt-1 block text-xs text-ink-soft">
                        RMSE <Value unit={units.value}>{formatNumber(estimate.fit.rmse, 3)}</Value> · R² <span className="tabular">{formatNumber(estimate.fit.r2, 4)}</span>
                      </span>
                    ) : null}
                  </>
                ) : (
                  <span className="text-xs text-act">
                    <span aria-hidden="true">✕ </span>Not available: {estimate.message}
                  </span>
                )}
              </span>
            </label>
          );
        })}
      </div>
    </fieldset>
  );
}
