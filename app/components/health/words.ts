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

/** Evidence metric names in words. */
export const METRIC_LABELS: Record<string, string> = {
  "saturation.share24h": "Share of time at the output limit (24 h)",
  "saturation.share7d": "Share of time at the output limit (7 days)",
  "windup.share24h": "Share of time with the integrator held (24 h)",
  "windup.pinnedShare24h": "Share of time with the integrator held while saturated (24 h)",
  "oscillation.detectionsPerHour": "Load-disturbance detections per hour",
  "drift.cusumHigh": "Drift sum, upward",
  "drift.cusumLow": "Drift sum, downward",
  "silent.minutesSinceDigest": "Minutes since the last digest",
};

export function metricLabel(metric: string): string {
  return METRIC_LABELS[metric] ?? metric;
}
