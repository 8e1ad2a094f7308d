import { describe, expect, it } from "vitest";
import { safeNext } from "./safe-next";

describe("safeNext", () => {
  it.each([
    ["//evil.example", "/"],
    ["/\\evil.example", "/"],
    ["/\t/evil.example", "/"],
    ["/%09/evil.example", "/%09/evil.example"],
    ["/%5Cevil.example", "/%5Cevil.example"],
    ["/%2F%2Fevil.example", "/%2F%2Fevil.example"],
    ["https://evil.example", "/"],
    ["javascript:alert(1)", "/"],
    [" /o/corvid", "/"],
    ["/.//evil.example", "/"],
    ["/\n/evil.example", "/"],
    ["\\\\evil.example", "/"],
    ["", "/"],
    [null, "/"],
  ])("refuses or neutralises %j", (next, expected) => {
    expect(safeNext(next)).toBe(expected);
  });

  it("keeps our own paths with their query and fragment", () => {
    expect(safeNext("/o/corvid/machines?site=x#top")).toBe("/o/corvid/machines?site=x#top");
    expect(safeNext("/o/corvid/../corvid/team")).toBe("/o/corvid/team");
  });
});
