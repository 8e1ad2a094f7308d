// Release shapes shared by the server, the API and the pages (browser-safe).
import type { GuardFigures } from "./guard";

export const RELEASE_STATES = ["pending", "piloting", "held", "widening", "complete", "rolled_back"] as const;
export type ReleaseState = (typeof RELEASE_STATES)[number];

/** A wave: `pending` (not offered yet), `offered` (offered, devices acknowledging), `complete`, `stopped` (held or rolled back before it was offered). */
export const WAVE_STATES = ["pending", "offered", "complete", "stopped"] as const;
export type WaveState = (typeof WAVE_STATES)[number];

export const TARGET_STATES = ["pending", "offered", "applied", "rejected"] as const;
export type TargetState = (typeof TARGET_STATES)[number];

export type ReleaseTargetSpec = { all?: boolean; machineIds?: string[]; siteIds?: string[]; customerIds?: string[] };
export type ReleasePilotSpec = { machineIds?: string[]; share?: number };

/** The last guard evaluation, stored with the release and shown on its page. */
export type ReleaseFigures = GuardFigures & { evaluatedAt: string; hold: boolean; reason: string | null };
