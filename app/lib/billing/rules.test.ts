import { describe, expect, it } from "vitest";
import { holdMessage, holdReason, TRIAL_MACHINE_LIMIT, type StandingInput } from "./rules";

const now = new Date("2026-12-03T12:00:00Z");
const later = new Date("2026-12-10T12:00:00Z");
const earlier = new Date("2026-12-01T12:00:00Z");

describe("holdReason", () => {
  const trial = (activeMachines: number, trialEndsAt = later): StandingInput => ({ plan: "trial", status: "trialing", trialEndsAt, activeMachines });
  const paying = (status: StandingInput["status"]): StandingInput => ({ plan: "per_machine", status, trialEndsAt: earlier, activeMachines: 40 });

  it.each([
    ["trial, 0 machines, adding 1", trial(0), 1, null],
    ["trial, 4 machines, adding 1", trial(4), 1, null],
    ["trial, 5 machines (releases)", trial(TRIAL_MACHINE_LIMIT), 0, null],
    ["trial, 5 machines, adding 1", trial(5), 1, "trial_machine_limit"],
    ["trial, 3 machines, adding 3 (import)", trial(3), 3, "trial_machine_limit"],
    ["trial, 6 machines (releases)", trial(6), 0, "trial_machine_limit"],
    ["trial ended", trial(1, earlier), 0, "trial_expired"],
    ["trial ended outranks the limit", trial(9, earlier), 1, "trial_expired"],
    ["active, many machines", paying("active"), 10, null],
    ["subscription on its own trial", paying("trialing"), 1, null],
    ["past due", paying("past_due"), 0, "past_due"],
    ["unpaid", paying("unpaid"), 0, "unpaid"],
    ["canceled", paying("canceled"), 0, "canceled"],
  ] as const)("%s", (_name, input, adding, expected) => {
    expect(holdReason(input, now, adding)).toBe(expected);
  });

  it("ends the trial at its instant, not a day later", () => {
    expect(holdReason(trial(1, now), now)).toBeNull();
    expect(holdReason(trial(1, now), new Date(now.getTime() + 1))).toBe("trial_expired");
  });

  it("says that running machines are not affected, whatever the reason", () => {
    for (const reason of ["past_due", "unpaid", "canceled", "trial_expired", "trial_machine_limit"] as const) expect(holdMessage(reason)).toContain("Running machines are not affected");
  });
});
