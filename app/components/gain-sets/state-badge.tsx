import { type StateLook, StatePill } from "~/components/ui/state-pill";
import type { GainSetState } from "~/lib/gain-sets/types";

// Each state as icon + word (never colour alone).
const STATES: Record<GainSetState, StateLook> = {
  draft: { icon: "✎", word: "Draft", className: "border-rule-strong text-ink-soft" },
  proposed: { icon: "?", word: "Proposed", className: "border-watch/50 bg-watch/10 text-watch" },
  approved: { icon: "✓", word: "Approved", className: "border-steady/40 bg-steady/10 text-steady" },
  released: { icon: "↗", word: "Released", className: "border-accent/40 bg-accent-wash text-accent-strong" },
  retired: { icon: "–", word: "Retired", className: "border-rule-strong text-ink-faint" },
  rejected: { icon: "✕", word: "Rejected", className: "border-act/40 bg-act/5 text-act" },
};

export function GainSetStateBadge({ state }: { state: GainSetState }) {
  return <StatePill look={STATES[state]} />;
}

export const STATE_WORDS: Record<GainSetState, string> = Object.fromEntries(Object.entries(STATES).map(([k, v]) => [k, v.word])) as Record<GainSetState, string>;
