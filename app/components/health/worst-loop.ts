// Which loop a machine's page opens on: the one asked for in `?loop=` when it belongs to the
// machine, otherwise its worst loop. Act before watch before silent before steady (a silent
// loop has no fresh figures to show, an act loop does), then the lowest score, then the
// machine's own loop order.
import type { HealthBand } from "~/lib/health";

const OPEN_ORDER: Record<HealthBand, number> = { act: 0, watch: 1, silent: 2, steady: 3 };

export type RankedLoop = { id: string; health: { band: HealthBand; score: number | null } };

export function pickLoop<T extends RankedLoop>(loops: readonly T[], requested: string | null | undefined): T | null {
  if (requested) {
    const asked = loops.find((l) => l.id === requested);
    if (asked) return asked;
  }
  let worst: T | null = null;
  for (const l of loops) {
    if (!worst) {
      worst = l;
      continue;
    }
    const byBand = OPEN_ORDER[l.health.band] - OPEN_ORDER[worst.health.band];
    const byScore = (l.health.score ?? 101) - (worst.health.score ?? 101);
    if (byBand < 0 || (byBand === 0 && byScore < 0)) worst = l;
  }
  return worst;
}
