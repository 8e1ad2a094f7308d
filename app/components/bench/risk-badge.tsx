import type { RiskVerdict } from "~/lib/compute/bench";

const LOOK = {
  ok: { icon: "✓", word: "Sound", className: "text-steady" },
  risky: { icon: "!", word: "Risky", className: "text-watch" },
  unstable: { icon: "✕", word: "Unstable", className: "text-act" },
} as const;

/** Icon + word (never colour alone), the reasons in words beside or under it. */
export function RiskBadge({ risk, detail = false }: { risk: RiskVerdict; detail?: boolean }) {
  const look = LOOK[risk.level];
  const reasons = risk.reasons.filter((r) => r !== "the loop is unstable");
  return (
    <span className={`inline-flex items-baseline gap-1 whitespace-nowrap text-xs font-medium ${look.className}`} title={reasons.join("; ") || undefined}>
      <span aria-hidden="true" className="inline-flex h-4 w-4 shrink-0 items-center justify-center self-center rounded-full border border-current text-[10px] font-bold leading-none">
        {look.icon}
      </span>
      {look.word}
      {detail && reasons.length ? <span className="font-normal text-ink-soft">: {reasons.join(", ")}</span> : null}
      {!detail && reasons.length ? <span className="sr-only">: {reasons.join(", ")}</span> : null}
    </span>
  );
}
