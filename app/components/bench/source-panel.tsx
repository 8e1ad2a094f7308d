import { useId, useState, type DragEvent, type FormEvent } from "react";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import type { FopdtModel } from "~/lib/control";
import { parseNumber } from "./format";

export type UploadState =
  | { phase: "idle" }
  | { phase: "uploading"; fraction: number; fileName: string }
  | { phase: "fitting"; fileName: string }
  | { phase: "error"; message: string; fileName?: string };

/** Drop zone plus a labelled file picker; the picker alone works from the keyboard. */
export function StepTestDrop({ onFile, busy, compact = false }: { onFile: (file: File) => void; busy: boolean; compact?: boolean }) {
  const [over, setOver] = useState(false);
  const inputId = useId();
  const drop = (event: DragEvent<HTMLDivElement>) => {
    event.preventDefault();
    setOver(false);
    const file = event.dataTransfer.files[0];
    if (file && !busy) onFile(file);
  };
  return (
    <div
      onDragOver={(event) => {
        event.preventDefault();
        setOver(true);
      }}
      onDragLeave={() => setOver(false)}
      onDrop={drop}
      className={`rounded-lg border-2 border-dashed transition-colors ${compact ? "flex items-center gap-2 px-1.5 py-1" : "px-4 py-6 text-center"} ${over ? "border-accent bg-accent-wash" : "border-rule bg-paper"}`}
    >
      {compact ? null : <p className="text-sm text-ink-soft">Drop a step-test CSV here, or</p>}
      <label
        htmlFor={inputId}
        className={`${compact ? "" : "mt-1"} inline-flex cursor-pointer items-center justify-center rounded-md border border-rule bg-white px-3.5 py-2 text-sm font-medium text-ink hover:bg-paper-deep focus-within:ring-2 focus-within:ring-accent ${busy ? "pointer-events-none opacity-60" : ""}`}
      >
        {compact ? "Upload a step test" : "Choose a CSV file"}
      </label>
      <input
        id={inputId}
        type="file"
        accept=".csv,text/csv,text/plain"
        className="sr-only"
        disabled={busy}
        onChange={(event) => {
          const file = event.target.files?.[0];
          event.target.value = "";
          if (file) onFile(file);
        }}
      />
      {compact ? (
        <span className="pr-1.5 text-xs text-ink-faint">or drop a CSV here</span>
      ) : (
      <p className="mt-2 text-xs text-ink-faint">
        A header row naming columns <code>t</code> (s), <code>u</code> (controller output) and <code>y</code> (process value); at most 5 MB.
      </p>
      )}
    </div>
  );
}

export function UploadStatus({ state }: { state: UploadState }) {
  if (state.phase === "idle") return null;
  if (state.phase === "error") {
    return (
      <Notice tone="error" title={state.fileName ? `${state.fileName} was not used` : "The step test was not used"}>
        {state.message}
      </Notice>
    );
  }
  const fraction = state.phase === "uploading" ? state.fraction : 1;
  const percent = Math.round(fraction * 100);
  return (
    <div role="status" className="rounded-md border border-rule bg-white px-3.5 py-3 text-sm">
      <div className="flex justify-between gap-3">
        <span className="min-w-0 truncate">
          {state.phase === "uploading" ? "Uploading" : "Fitting a model to"} <span className="font-medium">{state.fileName}</span>…
        </span>
        <span className="tabular text-ink-soft">{state.phase === "uploading" ? `${percent} %` : "uploaded"}</span>
      </div>
      <div
        className="mt-2 h-1.5 overflow-hidden rounded-full bg-paper-deep"
        role="progressbar"
        aria-label="Upload progress"
        aria-valuemin={0}
        aria-valuemax={100}
        aria-valuenow={percent}
      >
        <div className={`h-full rounded-full bg-accent transition-[width] ${state.phase === "fitting" ? "animate-pulse" : ""}`} style={{ width: `${percent}%` }} />
      </div>
    </div>
  );
}

type ModelErrors = Partial<Record<"gain" | "timeConstant" | "deadTime", string>>;

/** K, τ and θ of a first-order-plus-dead-time model, typed in. */
export function TypedModelForm({
  initial,
  units,
  onSubmit,
  submitLabel = "Tune this model",
}: {
  initial?: FopdtModel | null;
  units: { value: string; output: string };
  onSubmit: (model: FopdtModel) => void;
  submitLabel?: string;
}) {
  const [errors, setErrors] = useState<ModelErrors>({});
  const submit = (event: FormEvent<HTMLFormElement>) => {
    event.preventDefault();
    const form = new FormData(event.currentTarget);
    const gain = parseNumber(String(form.get("gain") ?? ""));
    const timeConstant = parseNumber(String(form.get("timeConstant") ?? ""));
    const deadTime = parseNumber(String(form.get("deadTime") ?? ""));
    const next: ModelErrors = {};
    if (gain === null || gain === 0) next.gain = "Enter a gain other than 0.";
    if (timeConstant === null || !(timeConstant > 0)) next.timeConstant = "Enter a time constant above 0 s.";
    if (deadTime === null || deadTime < 0) next.deadTime = "Enter a dead time of 0 s or more.";
    setErrors(next);
    if (Object.keys(next).length === 0) onSubmit({ type: "fopdt", gain: gain!, timeConstant: timeConstant!, deadTime: deadTime! });
  };
  return (
    <form onSubmit={submit} noValidate className="space-y-3">
      <Field
        label="Process gain K"
        name="gain"
        inputMode="decimal"
        defaultValue={initial ? String(initial.gain) : ""}
        unit={`${units.value}/${units.output}`}
        help="Change of the process value per unit of controller output."
        error={errors.gain}
      />
      <Field
        label="Time constant τ"
        name="timeConstant"
        inputMode="decimal"
        defaultValue={initial ? String(initial.timeConstant) : ""}
        unit="s"
        help="Time to 63 % of the change, after the dead time."
        error={errors.timeConstant}
      />
      <Field
        label="Dead time θ"
        name="deadTime"
        inputMode="decimal"
        defaultValue={initial ? String(initial.deadTime) : ""}
        unit="s"
        help="Delay before the process value starts to move."
        error={errors.deadTime}
      />
      <Button type="submit" variant="secondary">
        {submitLabel}
      </Button>
    </form>
  );
}
