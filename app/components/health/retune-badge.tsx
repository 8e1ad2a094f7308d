import { RETUNE_STATE_LABELS } from "~/components/health/words";
import { StatePill } from "~/components/ui/state-pill";
import type { RetuneState } from "~/lib/health/api-types";

// A retune request's state: colour + icon + word.
const STATE_TONE: Record<RetuneState, string> = {
  open: "border-watch/40 bg-watch/10 text-watch",
  in_progress: "border-accent/30 bg-accent-wash text-accent-strong",
  done: "border-steady/30 bg-steady/10 text-steady",
  declined: "border-rule-strong bg-paper-deep text-ink-soft",
};
const STATE_ICON: Record<RetuneState, string> = { open: "○", in_progress: "◐", done: "●", declined: "✕" };

export function RetuneStateBadge({ state }: { state: RetuneState }) {
  return <StatePill look={{ icon: STATE_ICON[state], word: RETUNE_STATE_LABELS[state], className: STATE_TONE[state] }} />;
}
