export const selectClass = "rounded-md border border-rule-strong bg-white px-2 py-1.5 text-sm text-ink";

/** One labelled filter of a GET form; the empty option means "no filter". */
export function FilterSelect({
  label,
  name,
  value,
  anyLabel,
  options,
}: {
  label: string;
  name: string;
  value: string | undefined;
  anyLabel: string;
  options: { value: string; label: string }[];
}) {
  return (
    <label className="flex flex-col text-xs text-ink-faint">
      {label}
      <select name={name} defaultValue={value ?? ""} className={selectClass}>
        <option value="">{anyLabel}</option>
        {options.map((o) => (
          <option key={o.value} value={o.value}>{o.label}</option>
        ))}
      </select>
    </label>
  );
}

/** GETs JSON from the management API for TanStack Query; a failure becomes an Error in words. */
export async function fetchJson<T>(url: string, what: string): Promise<T> {
  const response = await fetch(url, { headers: { accept: "application/json" } });
  if (!response.ok) throw new Error(`The ${what} could not be refreshed (${response.status}).`);
  return (await response.json()) as T;
}
