import { Field } from "~/components/ui/field";
import type { GainDraft, GainErrors } from "./gain-draft";
import type { Units } from "./settings-panel";

/** The gains being tried, in the chosen form; typing here overrides the proposal. */
export function GainEditor({ draft, errors, onChange, units }: { draft: GainDraft; errors: GainErrors; onChange: (draft: GainDraft) => void; units: Units }) {
  const perValue = `${units.output}/${units.value}`;
  const labels =
    draft.form === "standard"
      ? [
          { key: "a" as const, label: "Kc", unit: perValue, help: "Controller gain." },
          { key: "b" as const, label: "Ti", unit: "s", help: "Integral time; empty for none." },
          { key: "c" as const, label: "Td", unit: "s", help: "Derivative time; 0 for none." },
        ]
      : [
          { key: "a" as const, label: "kp", unit: perValue, help: "Proportional gain." },
          { key: "b" as const, label: "ki", unit: `${perValue}/s`, help: "Integral gain per second." },
          { key: "c" as const, label: "kd", unit: `${perValue}·s`, help: "Derivative gain in seconds." },
        ];
  return (
    <div className="grid grid-cols-1 gap-3 sm:grid-cols-3 lg:grid-cols-1">
      {labels.map((f) => (
        <Field
          key={f.key}
          label={f.label}
          unit={f.unit}
          inputMode="decimal"
          autoComplete="off"
          value={draft[f.key]}
          error={errors[f.key]}
          help={f.help}
          onChange={(event) => onChange({ ...draft, [f.key]: event.target.value })}
          className="[&_input]:pr-20"
        />
      ))}
    </div>
  );
}
