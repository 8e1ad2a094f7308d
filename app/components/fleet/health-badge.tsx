import type { HealthBand } from "~/lib/health";

// Health is always colour + icon + word (never colour alone), with the score beside it.
const BANDS: Record<HealthBand, { word: string; icon: string; className: string }> = {
  steady: { word: "steady", icon: "●", className: "border-steady/30 bg-steady/10 text-steady" },
  watch: { word: "watch", icon: "▲", className: "border-watch/40 bg-watch/10 text-watch" },
  act: { word: "act", icon: "■", className: "border-act/30 bg-act/10 text-act" },
  silent: { word: "silent", icon: "○", className: "border-silent/30 bg-silent/10 text-silent" },
};

export const HEALTH_LABELS: Record<HealthBand, string> = { steady: "Steady", watch: "Watch", act: "Act", silent: "Silent" };

export function HealthBadge({ band, score }: { band: HealthBand; score?: number | null }) {
  const b = BANDS[band];
  return (
    <span className={`inline-flex items-center gap-1.5 whitespace-nowrap rounded-full border px-2 py-0.5 text-xs font-medium ${b.className}`}>
      <span aria-hidden="true" className="text-[0.65rem] leading-none">{b.icon}</span>
      {b.word}
      {score !== null && score !== undefined ? <span className="tabular text-ink-soft">{score}</span> : null}
    </span>
  );
}
