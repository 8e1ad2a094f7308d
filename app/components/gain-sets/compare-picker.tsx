import { Form } from "react-router";
import { buttonClass } from "~/components/ui/button";

/** Choose two gain-set versions to compare (a GET form to the comparison page). */
export function ComparePicker({ action, versions, a, b }: { action: string; versions: { id: string; label: string }[]; a?: string; b?: string }) {
  return (
    <Form method="get" action={action} className="mt-3 flex flex-wrap items-end gap-3">
      {(["a", "b"] as const).map((name, i) => (
        <label key={name} className="text-xs font-medium text-ink">
          {name === "a" ? "First" : "Second"}
          <select
            name={name}
            defaultValue={(name === "a" ? a : b) ?? versions[Math.min(i, versions.length - 1)]?.id}
            className="mt-1 block w-64 max-w-full rounded-md border border-rule-strong bg-white px-2.5 py-1.5 text-sm font-normal"
          >
            {versions.map((v) => (
              <option key={v.id} value={v.id}>{v.label}</option>
            ))}
          </select>
        </label>
      ))}
      <button type="submit" className={buttonClass("secondary")}>Compare</button>
    </Form>
  );
}
