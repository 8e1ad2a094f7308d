/** The flyball governor: a spindle with two weighted arms. */
export function LogoMark({ className = "h-6 w-6" }: { className?: string }) {
  return (
    <svg viewBox="0 0 32 32" fill="none" stroke="currentColor" strokeWidth={2.2} strokeLinecap="round" className={className} aria-hidden="true">
      <path d="M16 3v26" />
      <path d="M16 8 8 19M16 8l8 11" />
      <circle cx="8" cy="20" r="3" fill="currentColor" />
      <circle cx="24" cy="20" r="3" fill="currentColor" />
      <path d="M11 26h10" />
    </svg>
  );
}

export function Wordmark() {
  return (
    <span className="inline-flex items-center gap-2 font-semibold tracking-tight text-ink">
      <LogoMark className="h-6 w-6 text-accent" />
      Flyball
    </span>
  );
}
