// The release guard: should a release in its pilot wave hold itself? Values in, a decision
// with its figures and its reason in words out. The rule (see DEVELOPERS.md "Releases"):
//
//  1. Rejections: hold when more than `maxRejectShare` (default 10 %) of the pilot devices
//     rejected the configuration.
//  2. Critical findings: hold when any pilot loop has an open critical finding.
//  3. IAE: for every pilot loop, r = (IAE per second since it applied the release) /
//     (its IAE per second before the release); for the control group (loops of the same
//     template not in the release) the same ratio over the same periods. Hold when the pilot
//     median exceeds the control median by more than `maxIaeIncrease` (default 20 %), i.e.
//     median(pilot) > (1 + maxIaeIncrease) · median(control). With no control loops the
//     control median is taken as 1 (no change). When both groups have at least
//     `MIN_LOOPS_FOR_TEST` ratios, a one-sided Mann–Whitney U test (pilot > control) must also
//     give p < `ALPHA`, so that noise alone does not hold a release; with fewer the median rule
//     decides alone (a small pilot errs towards holding).
import { mannWhitneyGreater, type MannWhitneyResult } from "./mann-whitney";

export const DEFAULT_MAX_IAE_INCREASE = 0.2;
export const DEFAULT_MAX_REJECT_SHARE = 0.1;
/** Ratios per group needed before the Mann–Whitney test is asked as well (practice). */
export const MIN_LOOPS_FOR_TEST = 5;
export const ALPHA = 0.05;

/** IAE per second of one loop before the release (baseline) and since (after); null when unknown. */
export type LoopIae = { loopId: string; baseline: number | null; after: number | null };

export type GuardInput = {
  pilot: LoopIae[];
  control: LoopIae[];
  devices: { total: number; rejected: number };
  /** Pilot loops with an open critical finding. */
  criticalLoopIds: string[];
  settings?: { maxIaeIncrease?: number | null; maxRejectShare?: number | null };
};

export type GuardFigures = {
  pilotRatios: number;
  controlRatios: number;
  pilotMedian: number | null;
  controlMedian: number | null;
  /** median(pilot) / median(control) − 1; null without pilot ratios. */
  increase: number | null;
  test: (MannWhitneyResult & { applied: true }) | { applied: false; reason: string };
  rejectShare: number | null;
  criticalLoops: number;
  maxIaeIncrease: number;
  maxRejectShare: number;
};

export type GuardDecision = {
  hold: boolean;
  /** Why it holds, in words; null when it does not. */
  reason: string | null;
  figures: GuardFigures;
};

export function median(values: number[]): number | null {
  if (values.length === 0) return null;
  const s = [...values].sort((a, b) => a - b);
  const mid = s.length >> 1;
  return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
}

/** Ratios of loops with a positive, finite baseline and a finite after-value. */
export function iaeRatios(loops: LoopIae[]): number[] {
  const out: number[] = [];
  for (const l of loops) {
    if (l.baseline == null || l.after == null) continue;
    if (!(l.baseline > 0) || !Number.isFinite(l.baseline) || !Number.isFinite(l.after) || l.after < 0) continue;
    out.push(l.after / l.baseline);
  }
  return out;
}

const pct = (x: number) => `${Math.round(x * 100)} %`;

export function evaluateGuard(input: GuardInput): GuardDecision {
  const maxIaeIncrease = input.settings?.maxIaeIncrease ?? DEFAULT_MAX_IAE_INCREASE;
  const maxRejectShare = input.settings?.maxRejectShare ?? DEFAULT_MAX_REJECT_SHARE;
  const pilot = iaeRatios(input.pilot);
  const control = iaeRatios(input.control);
  const pilotMedian = median(pilot);
  const controlMedian = median(control);
  const reference = controlMedian ?? 1;
  const increase = pilotMedian == null || reference <= 0 ? null : pilotMedian / reference - 1;
  const rejectShare = input.devices.total > 0 ? input.devices.rejected / input.devices.total : null;
  const enough = pilot.length >= MIN_LOOPS_FOR_TEST && control.length >= MIN_LOOPS_FOR_TEST;
  const test: GuardFigures["test"] = enough
    ? { ...mannWhitneyGreater(pilot, control), applied: true }
    : { applied: false, reason: `fewer than ${MIN_LOOPS_FOR_TEST} loops with figures in ${pilot.length < MIN_LOOPS_FOR_TEST ? "the pilot" : "the control group"}` };
  const figures: GuardFigures = { pilotRatios: pilot.length, controlRatios: control.length, pilotMedian, controlMedian, increase, test, rejectShare, criticalLoops: input.criticalLoopIds.length, maxIaeIncrease, maxRejectShare };

  const reasons: string[] = [];
  if (rejectShare != null && rejectShare > maxRejectShare) {
    reasons.push(`${input.devices.rejected} of ${input.devices.total} pilot devices (${pct(rejectShare)}) rejected the configuration, more than the allowed ${pct(maxRejectShare)}`);
  }
  if (input.criticalLoopIds.length > 0) {
    reasons.push(`${input.criticalLoopIds.length} pilot loop${input.criticalLoopIds.length === 1 ? " has" : "s have"} an open critical finding`);
  }
  if (increase != null && increase > maxIaeIncrease) {
    const base = `the pilot loops' median IAE ratio (${pilotMedian!.toFixed(3)}) is ${pct(increase)} above ${controlMedian == null ? "their baseline (no control loops)" : `the control group's (${controlMedian.toFixed(3)})`}, more than the allowed ${pct(maxIaeIncrease)}`;
    if (!test.applied) reasons.push(base);
    else if (test.p < ALPHA) reasons.push(`${base}, and a Mann–Whitney test says the pilot is worse (p = ${test.p.toPrecision(2)} < ${ALPHA})`);
  }
  return { hold: reasons.length > 0, reason: reasons.length ? capitalise(reasons.join("; ")) + "." : null, figures };
}

function capitalise(s: string) {
  return s.charAt(0).toUpperCase() + s.slice(1);
}

/** The rule in words, for the release page. */
export function describeGuardRule(settings: { maxIaeIncrease?: number | null; maxRejectShare?: number | null } = {}): string {
  const g = settings.maxIaeIncrease ?? DEFAULT_MAX_IAE_INCREASE;
  const r = settings.maxRejectShare ?? DEFAULT_MAX_REJECT_SHARE;
  return (
    `The release holds itself when more than ${pct(r)} of pilot devices reject the configuration, when any pilot loop opens a critical finding, ` +
    `or when the pilot loops' median ratio of IAE per second (after applying / before the release) is more than ${pct(g)} above the same median for loops of the same template outside the release` +
    ` — with at least ${MIN_LOOPS_FOR_TEST} loops in each group, only if a one-sided Mann–Whitney test also finds the pilot worse (p < ${ALPHA}).`
  );
}
