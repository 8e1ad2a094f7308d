/** A number with its unit after it in a lighter tone, in tabular figures (`182.4 °C`, `12 %`). */
export function Value({ children, unit, className = "" }: { children: string; unit?: string; className?: string }) {
  return (
    <span className={`tabular whitespace-nowrap ${className}`}>
      {children}
      {unit && children !== "–" ? <span className="text-ink-faint"> {unit}</span> : null}
    </span>
  );
}
