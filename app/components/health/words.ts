// The words the loop-health pages use for kinds, severities and states, and per kind what a
// finding means and what to check first (our own wording, for a site manager as much as for
// an engineer).
import type { FindingKind, FindingSeverity, FindingState, RetuneState } from "~/lib/health/api-types";

export const KIND_LABELS: Record<FindingKind, string> = {
  drift: "Drift",
  windup: "Windup",
  saturation: "Saturation",
  oscillation: "Oscillation",
  silent: "Silent",
  config_rejected: "Gains refused",
};

/** One short phrase per kind, used where a machine's reason is listed. */
export const KIND_PHRASES: Record<FindingKind, string> = {
  drift: "control error has grown since the last gain change",
  windup: "integrator held at its limit",
  saturation: "output pinned at its limit",
  oscillation: "the loop keeps swinging",
  silent: "no digests arriving",
  config_rejected: "device refused the new gains",
};

export const SEVERITY_LABELS: Record<FindingSeverity, string> = { info: "Info", warning: "Warning", critical: "Critical" };
export const SEVERITY_RANK: Record<FindingSeverity, number> = { info: 0, warning: 1, critical: 2 };

export const STATE_LABELS: Record<FindingState, string> = { open: "Open", acknowledged: "Acknowledged", resolved: "Resolved" };

export const RETUNE_STATE_LABELS: Record<RetuneState, string> = {
  open: "Waiting for an engineer",
  in_progress: "Being worked on",
  done: "Done",
  declined: "Declined",
};

/** Which states an engineer may move a retune request to from its current one. */
export const RETUNE_NEXT: Record<RetuneState, RetuneState[]> = {
  open: ["in_progress", "done", "declined"],
  in_progress: ["done", "declined"],
  done: [],
  declined: [],
};

export type KindGuide = { means: string; checkFirst: string[] };

export const KIND_GUIDES: Record<FindingKind, KindGuide> = {
  saturation: {
    means:
      "The controller is asking for more than the actuator can give: its output sits at the top or bottom of its range for a growing share of the time. While the output is pinned, the loop is not controlling; the process runs on whatever the actuator delivers flat out.",
    checkFirst: [
      "The actuator's capacity before the gains: a worn heater band, a clogged valve or a tired drive cannot be fixed by tuning.",
      "Whether the load or setpoint has moved outside what the machine was sized for (a new material, a higher throughput).",
      "Output limits configured on the device: a limit set tighter than the actuator's real range looks the same.",
    ],
  },
  windup: {
    means:
      "The integrator was held at its limit for a large share of the time. When it is finally released the loop overshoots, because the integral has to unwind first.",
    checkFirst: [
      "The output limits and the integrator limits on the device: they should match the actuator's real range.",
      "Whether the output is saturated at the same time (a pinned integrator): then the actuator, not the tuning, is the first suspect.",
      "Long setpoint ramps or start-ups that keep the loop at a limit by design.",
    ],
  },
  oscillation: {
    means:
      "The device detects load disturbances far more often than a well-behaved loop would: the process value keeps swinging around the setpoint instead of settling.",
    checkFirst: [
      "Valve or actuator stiction: a sticking actuator makes a steady limit cycle that no gain change removes.",
      "Gains too high for the current process, especially after a change in material or speed.",
      "Mechanical play or a loose coupling between actuator and process.",
    ],
  },
  drift: {
    means:
      "The loop's control error per second has moved away from what it was after the last gain change, and stayed away: the process or the measurement has changed, not just one bad hour.",
    checkFirst: [
      "A change in the process itself: different material, throughput or ambient conditions.",
      "The sensor: a drifting or loose thermocouple or pressure transducer.",
      "Fouling or wear that slowly changes how the process responds (deposits, a worn screw, scaling).",
    ],
  },
  silent: {
    means: "Flyball has received no digests from this loop for more than three times its expected interval, so its health is unknown.",
    checkFirst: [
      "Power to the machine and its controller.",
      "The network path from the controller to the internet (cable, switch, firewall).",
      "The device clock: a controller whose clock is far off sends tokens that are refused.",
    ],
  },
  config_rejected: {
    means: "The device refused the gain set it was sent and kept running on its previous gains.",
    checkFirst: [
      "The reason the device gave (shown in the evidence below).",
      "Whether the gain set fits the loop's safety envelope on this firmware version.",
      "The device's signing key and clock, if the reason mentions the signature or its age.",
    ],
  },
};

/** Evidence and series metric names in words. */
export const METRIC_LABELS: Record<string, string> = {
  "saturation.share24h": "Time at the output limit, last 24 h",
  "saturation.share": "Time at the output limit, per hour",
  "windup.share24h": "Integrator held, last 24 h",
  "windup.share": "Integrator held, per hour",
  "oscillation.detectionsPerHour": "Load-disturbance detections per hour",
  "drift.cusumHigh": "Drift sum, upward",
  "drift.cusumLow": "Drift sum, downward",
  "iae.perSecond": "Control error (IAE) per second",
  "silence.secondsSinceDigest": "Time since the last digest",
  "digests.perHour": "Digests received per hour",
};

export function metricLabel(metric: string): string {
  return METRIC_LABELS[metric] ?? metric;
}

type FigureSpec = { label: string; format: (v: number) => string };
const share = (v: number) => `${Math.round(v * 100)} %`;
const sig = (digits: number, unit = "") => (v: number) => `${Number(v.toPrecision(digits))}${unit ? ` ${unit}` : ""}`;

/** Evidence figures by key: a label in words and the product's number style. */
const FIGURES: Record<string, FigureSpec> = {
  share24h: { label: "Share of the last 24 h", format: share },
  share7d: { label: "Share of the last 7 days", format: share },
  slopePerDay: { label: "Trend", format: (v) => `${v > 0 ? "+" : ""}${Number((v * 100).toPrecision(2))} points a day` },
  pinnedShare24h: { label: "Held while the output was saturated, 24 h", format: share },
  detectionsPerHour: { label: "Detections per hour", format: sig(3, "per hour") },
  limitPerHour: { label: "Limit", format: sig(3, "per hour") },
  supervisionSeconds: { label: "Supervision time (50·Tu)", format: (v) => formatSeconds(v) },
  baselineMean: { label: "Baseline IAE per second", format: sig(3) },
  baselineStd: { label: "Baseline standard deviation", format: sig(3) },
  cusumHigh: { label: "Drift sum, upward", format: sig(3, "std devs") },
  cusumLow: { label: "Drift sum, downward", format: sig(3, "std devs") },
  sinceGainVersion: { label: "Baseline since gain version", format: (v) => String(v) },
  expectedIntervalS: { label: "Expected digest interval", format: (v) => formatSeconds(v) },
};
const DATE_FIGURES: Record<string, string> = { projectedActAt: "Reaches the act limit about", lastDigestAt: "Last digest" };

export function figureLabel(key: string): string {
  return FIGURES[key]?.label ?? DATE_FIGURES[key] ?? key;
}

export function formatFigure(key: string, value: number | string | null): string {
  if (value === null || value === undefined) return "–";
  if (typeof value === "number") return FIGURES[key] ? FIGURES[key].format(value) : String(Number(value.toPrecision(4)));
  if (DATE_FIGURES[key] && !Number.isNaN(Date.parse(value))) return `${new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", year: "numeric", hour: "2-digit", minute: "2-digit", timeZone: "UTC" }).format(new Date(value))} UTC`;
  return value;
}

/** A duration in the largest sensible unit: 45 s, 12 min, 3.5 h, 2.1 days. */
export function formatSeconds(s: number): string {
  if (!Number.isFinite(s)) return "–";
  if (s < 120) return `${Number(s.toPrecision(3))} s`;
  if (s < 7200) return `${Number((s / 60).toPrecision(3))} min`;
  if (s < 172_800) return `${Number((s / 3600).toPrecision(3))} h`;
  return `${Number((s / 86_400).toPrecision(3))} days`;
}
