import { describe, expect, it } from "vitest";
import { pickLoop } from "./worst-loop";

const loop = (id: string, band: "steady" | "watch" | "act" | "silent", score: number | null) => ({ id, health: { band, score } });

describe("pickLoop", () => {
  it.each([
    ["act before a lower-scored watch", [loop("a", "watch", 40), loop("b", "act", 55)], null, "b"],
    ["lowest score within a band", [loop("a", "watch", 70), loop("b", "watch", 62), loop("c", "steady", 95)], null, "b"],
    ["watch before silent", [loop("a", "silent", null), loop("b", "watch", 80)], null, "b"],
    ["silent before steady", [loop("a", "steady", 90), loop("b", "silent", null)], null, "b"],
    ["first loop on a tie", [loop("a", "steady", 90), loop("b", "steady", 90)], null, "a"],
    ["the asked loop when it is the machine's", [loop("a", "act", 10), loop("b", "steady", 99)], "b", "b"],
    ["the worst when the asked loop is another machine's", [loop("a", "act", 10), loop("b", "steady", 99)], "zzz", "a"],
  ])("%s", (_name, loops, asked, expected) => {
    expect(pickLoop(loops, asked)?.id).toBe(expected);
  });

  it("answers null for a machine without loops", () => {
    expect(pickLoop([], null)).toBeNull();
  });
});
