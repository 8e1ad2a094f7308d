import type { ReactNode } from "react";

type Tone = "success" | "error" | "info" | "caution";

const tones: Record<Tone, { box: string; icon: string; word: string }> = {
  success: { box: "border-steady/30 bg-steady/5 text-steady", icon: "✓", word: "Done" },
  error: { box: "border-act/30 bg-act/5 text-act", icon: "✕", word: "Problem" },
  info: { box: "border-accent/25 bg-accent-wash text-accent-strong", icon: "i", word: "Note" },
  caution: { box: "border-watch/40 bg-watch/10 text-ink", icon: "!", word: "Caution" },
};

/** A message in words, with an icon: never colour alone. */
export function Notice({ tone, title, children }: { tone: Tone; title?: string; children?: ReactNode }) {
  const t = tones[tone];
  return (
    <div role={tone === "error" ? "alert" : "status"} className={`flex gap-3 rounded-md border px-3.5 py-3 text-sm ${t.box}`}>
      <span aria-hidden="true" className="mt-px flex h-5 w-5 shrink-0 items-center justify-center rounded-full border border-current text-xs font-bold">
        {t.icon}
      </span>
      <div className="min-w-0">
        <p className="font-semibold">{title ?? t.word}</p>
        {children ? <div className="mt-0.5 text-ink-soft">{children}</div> : null}
      </div>
    </div>
  );
}

/** The caution shown wherever a change reaches a live machine (README.md, "Safety"). */
export function LiveMachineCaution() {
  return (
    <Notice tone="caution" title="These gains will reach running machines">
      New gains change how a machine moves, heats or presses. Apply them only with the machine in a safe state, keep
      safety functions independent of the tuned loop, and follow local codes, functional-safety practice and qualified
      personnel.
    </Notice>
  );
}
