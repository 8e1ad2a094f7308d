import { useId, type InputHTMLAttributes, type ReactNode, type SelectHTMLAttributes } from "react";

type FieldProps = {
  label: string;
  help?: ReactNode;
  error?: string | string[];
  unit?: string;
} & InputHTMLAttributes<HTMLInputElement>;

const inputClass =
  "block w-full rounded-md border border-rule-strong bg-white px-3 py-2 text-sm text-ink shadow-xs placeholder:text-ink-faint focus:border-accent focus:outline-none focus:ring-2 focus:ring-accent/30 aria-invalid:border-act";

function firstError(error: string | string[] | undefined) {
  return Array.isArray(error) ? error[0] : error;
}

/** A labelled input with help text under it and the unit inside the box. */
export function Field({ label, help, error, unit, className = "", ...input }: FieldProps) {
  const id = useId();
  const message = firstError(error);
  return (
    <div className={className}>
      <label htmlFor={id} className="block text-sm font-medium text-ink">
        {label}
      </label>
      <div className="relative mt-1">
        <input
          id={id}
          aria-invalid={message ? true : undefined}
          aria-describedby={`${id}-help`}
          className={`${inputClass} ${unit ? "pr-12" : ""}`}
          {...input}
        />
        {unit ? (
          <span className="pointer-events-none absolute inset-y-0 right-3 flex items-center text-sm text-ink-faint">{unit}</span>
        ) : null}
      </div>
      <p id={`${id}-help`} className={`mt-1 text-xs ${message ? "text-act" : "text-ink-faint"}`}>
        {message ?? help}
      </p>
    </div>
  );
}

export function SelectField({
  label,
  help,
  error,
  children,
  className = "",
  ...select
}: { label: string; help?: ReactNode; error?: string | string[] } & SelectHTMLAttributes<HTMLSelectElement>) {
  const id = useId();
  const message = firstError(error);
  return (
    <div className={className}>
      <label htmlFor={id} className="block text-sm font-medium text-ink">
        {label}
      </label>
      <select id={id} className={`${inputClass} mt-1`} aria-invalid={message ? true : undefined} {...select}>
        {children}
      </select>
      <p className={`mt-1 text-xs ${message ? "text-act" : "text-ink-faint"}`}>{message ?? help}</p>
    </div>
  );
}
