// The loop-health management API's answers and request bodies (`/api/v1/o/:slug/...`): one
// contract for the resource routes that produce them and the pages that read them through
// TanStack Query. Times are ISO 8601 strings; shares are fractions 0..1.
import { z } from "zod";
import type { HealthBand } from "./assess";

export const FINDING_KINDS = ["drift", "windup", "saturation", "oscillation", "silent", "config_rejected"] as const;
export type FindingKind = (typeof FINDING_KINDS)[number];
export const FINDING_STATES = ["open", "acknowledged", "resolved"] as const;
export type FindingState = (typeof FINDING_STATES)[number];
export const FINDING_SEVERITIES = ["info", "warning", "critical"] as const;
export type FindingSeverity = (typeof FINDING_SEVERITIES)[number];
export const RETUNE_STATES = ["open", "in_progress", "done", "declined"] as const;
export type RetuneState = (typeof RETUNE_STATES)[number];

export type Paged<T> = { items: T[]; total: number; page: number; pageSize: number };

/** What tripped a finding: the figures, the window and the threshold it crossed. */
export type FindingEvidence = {
  /** The metric judged, e.g. "saturation.share24h", "drift.cusumHigh". */
  metric: string;
  value: number | null;
  threshold: number | null;
  unit: string;
  windowStart: string | null;
  windowEnd: string | null;
  figures: Record<string, number | string | null>;
};

export type FindingItem = {
  id: string;
  kind: FindingKind;
  severity: FindingSeverity;
  state: FindingState;
  machineId: string;
  machineSerial: string;
  loopId: string;
  loopKey: string;
  openedAt: string;
  updatedAt: string;
  resolvedAt: string | null;
  summary: string;
  evidence: FindingEvidence;
};

export type FindingHistoryEntry = { at: string; state: FindingState; actorName: string | null; comment: string | null };
export type FindingDetail = FindingItem & { history: FindingHistoryEntry[] };

export type LoopHealth = {
  loopId: string;
  band: HealthBand;
  score: number;
  reasons: string[];
  lastDigestAt: string | null;
  saturation: { share24h: number | null; share7d: number | null; slopePerDay: number | null; projectedActAt: string | null };
  windup: { share24h: number | null; pinnedShare24h: number | null };
  oscillation: { detectionsPerHour: number | null; limitPerHour: number | null };
  drift: {
    state: "learning" | "in_control" | "drifting";
    baselineMean: number | null;
    baselineStd: number | null;
    cusumHigh: number | null;
    cusumLow: number | null;
    limit: number;
    sinceGainVersion: number | null;
  };
};

export type BandCounts = Record<HealthBand, number>;

export type Overview = {
  loops: BandCounts;
  machines: BandCounts;
  openFindings: { byKind: Partial<Record<FindingKind, number>>; bySeverity: Partial<Record<FindingSeverity, number>> };
  attention: { machineId: string; serial: string; band: HealthBand; score: number; reason: string }[];
  trend: ({ day: string } & BandCounts)[];
};

export type RetuneRequest = {
  id: string;
  state: RetuneState;
  machineId: string;
  machineSerial: string;
  loopId: string | null;
  loopKey: string | null;
  observation: string;
  requestedBy: string | null;
  createdAt: string;
  updatedAt: string;
  history: { at: string; state: RetuneState; actorName: string | null; comment: string | null }[];
};

export type AlertSubscription = {
  kinds: FindingKind[];
  minSeverity: FindingSeverity;
  siteIds: string[];
  /** Findings opened within this many minutes of each other go out as one summary e-mail. */
  summaryAfter: number;
};

// ---- request schemas (shared by the API routes and the pages' forms) ----

const blank = (v: unknown) => (v === "" || v === null ? undefined : v);
const optionalUuid = z.preprocess(blank, z.string().uuid().optional());

export const FindingsQuerySchema = z.object({
  state: z.preprocess(blank, z.enum(FINDING_STATES).optional()),
  kind: z.preprocess(blank, z.enum(FINDING_KINDS).optional()),
  severity: z.preprocess(blank, z.enum(FINDING_SEVERITIES).optional()),
  machineId: optionalUuid,
  loopId: optionalUuid,
  customerId: optionalUuid,
  siteId: optionalUuid,
  sort: z.preprocess(blank, z.enum(["openedAt", "updatedAt", "severity", "kind", "machineSerial"]).default("updatedAt")),
  dir: z.preprocess(blank, z.enum(["asc", "desc"]).default("desc")),
  page: z.preprocess(blank, z.coerce.number().int().min(1).max(100_000).default(1)),
  pageSize: z.preprocess(blank, z.coerce.number().int().min(1).max(200).default(50)),
});
export type FindingsQuery = z.infer<typeof FindingsQuerySchema>;

export const OverviewQuerySchema = z.object({ customerId: optionalUuid, siteId: optionalUuid, modelId: optionalUuid });
export type OverviewQuery = z.infer<typeof OverviewQuerySchema>;

export const AcknowledgeSchema = z.object({ comment: z.string().trim().max(2000).optional() });
export const ResolveSchema = z.object({ comment: z.string().trim().min(1, "Say how it was resolved.").max(2000) });

export const RetuneCreateSchema = z.object({
  machineId: z.string().uuid(),
  loopId: z.preprocess(blank, z.string().uuid().optional()),
  observation: z.string().trim().min(3, "Say what you observe.").max(4000),
});
export const RetuneStateSchema = z.object({
  state: z.enum(RETUNE_STATES),
  comment: z.string().trim().min(1, "Add a comment the site manager will see.").max(2000),
});

export const AlertSubscriptionSchema = z.object({
  kinds: z.array(z.enum(FINDING_KINDS)).max(FINDING_KINDS.length),
  minSeverity: z.enum(FINDING_SEVERITIES),
  siteIds: z.array(z.string().uuid()).max(500),
  summaryAfter: z.number().int().min(0).max(1440),
});
