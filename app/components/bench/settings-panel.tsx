import { Field, SelectField } from "~/components/ui/field";
import type { AntiWindupMode, ControllerType, FopdtModel } from "~/lib/control";
import { formatTime, toInputValue } from "./format";
import type { SettingsDraft, SettingsErrors } from "./settings-draft";

export type Units = { value: string; output: string };

const KINDS: ControllerType[] = ["P", "PI", "PID"];

const ANTI_WINDUP: { value: AntiWindupMode; label: string }[] = [
  { value: "clamp", label: "Clamp the integrator" },
  { value: "back-calculation", label: "Back-calculation" },
  { value: "none", label: "None" },
];

/** Controller kinds, rule parameters, the sampled loop and the test scenario. */
export function SettingsPanel({
  draft,
  errors,
  onChange,
  model,
  units,
  onUnitsChange,
  loadTime,
  startingOutput,
}: {
  draft: SettingsDraft;
  errors: SettingsErrors;
  onChange: (draft: SettingsDraft) => void;
  model: FopdtModel;
  units: Units;
  onUnitsChange: (units: Units) => void;
  loadTime: number | null;
  startingOutput: number;
}) {
  const set = <K extends keyof SettingsDraft>(key: K, value: SettingsDraft[K]) => onChange({ ...draft, [key]: value });
  const text = (key: Exclude<keyof SettingsDraft, "kinds" | "antiWindup">) => ({
    value: draft[key],
    onChange: (event: React.ChangeEvent<HTMLInputElement>) => set(key, event.target.value),
    error: errors[key],
    inputMode: "decimal" as const,
    autoComplete: "off",
  });
  const lambdaDefault = Math.max(model.deadTime, model.timeConstant / 4);
  return (
    <div className="grid gap-x-5 gap-y-4 sm:grid-cols-2 lg:grid-cols-4">
      <fieldset className="sm:col-span-2 lg:col-span-1">
        <legend className="text-sm font-medium text-ink">Controller kinds</legend>
        <div className="mt-1.5 flex flex-wrap gap-x-4 gap-y-1">
          {KINDS.map((kind) => (
            <label key={kind} className="flex items-center gap-1.5 text-sm">
              <input
                type="checkbox"
                checked={draft.kinds[kind]}
                onChange={(event) => set("kinds", { ...draft.kinds, [kind]: event.target.checked })}
                className="accent-[var(--color-accent)]"
              />
              {kind}
            </label>
          ))}
        </div>
        <p className={`mt-1 text-xs ${errors.kinds ? "text-act" : "text-ink-faint"}`}>{errors.kinds ?? "Rules propose only the kinds they define."}</p>
      </fieldset>
      <Field label="SIMC τc" unit="s" placeholder={toInputValue(model.deadTime)} help={`Closed-loop time constant; empty is θ (${formatTime(model.deadTime)} s).`} {...text("simcTimeConstant")} />
      <Field label="IMC λ" unit="s" placeholder={toInputValue(lambdaDefault)} help={`Empty is max(θ, τ/4) = ${formatTime(lambdaDefault)} s.`} {...text("imcLambda")} />
      <Field label="Sample period" unit="s" help="The controller's period; margins are of the sampled loop." {...text("samplePeriod")} />
      <Field label="Output low limit" unit={units.output} help={`Absolute; the loop starts at ${toInputValue(startingOutput)} ${units.output}.`} {...text("outputMin")} />
      <Field label="Output high limit" unit={units.output} help="Leave both empty for no limits." {...text("outputMax")} />
      <SelectField
        label="Anti-windup"
        value={draft.antiWindup}
        onChange={(event) => set("antiWindup", event.target.value as AntiWindupMode)}
        help="Back-calculation tracks with √(Ti·Td), or Ti for PI."
      >
        {ANTI_WINDUP.map((option) => (
          <option key={option.value} value={option.value}>
            {option.label}
          </option>
        ))}
      </SelectField>
      <Field label="Derivative filter N" help="Filter time Td/N on the derivative." {...text("filterN")} />
      <Field label="Set-point change" unit={units.value} help="A step at t = 0." {...text("setpointChange")} />
      <Field
        label="Load step"
        unit={units.output}
        help={loadTime !== null ? `At the plant input, at t = ${formatTime(loadTime)} s.` : "At the plant input, halfway through."}
        {...text("loadStep")}
      />
      <Field
        label="Process value unit"
        value={units.value}
        maxLength={12}
        onChange={(event) => onUnitsChange({ ...units, value: event.target.value })}
        help="Used in labels only."
      />
      <Field
        label="Controller output unit"
        value={units.output}
        maxLength={12}
        onChange={(event) => onUnitsChange({ ...units, output: event.target.value })}
        help="Used in labels only."
      />
    </div>
  );
}
