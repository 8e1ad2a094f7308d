// The grouped statement's rules, without a database: items that arrive together share a
// batch; a failing batch is retried on a deadlock and otherwise split so only the culprit fails.
import { describe, expect, it } from "vitest";
import { createBatcher } from "./batch";

describe("createBatcher", () => {
  it("gathers items that arrive together into one batch and answers each", async () => {
    const batches: number[][] = [];
    const batcher = createBatcher<number, number>(async (items) => {
      batches.push([...items]);
      return items.map((i) => i * 2);
    });
    expect(await Promise.all([1, 2, 3].map((i) => batcher.run(i)))).toEqual([2, 4, 6]);
    expect(batches).toEqual([[1, 2, 3]]);
  });

  it("fails only the poisoned item when a shared statement fails", async () => {
    const seen: number[][] = [];
    const batcher = createBatcher<number, number>(async (items) => {
      seen.push([...items]);
      if (items.includes(13)) throw Object.assign(new Error("invalid input syntax"), { code: "22007" });
      return items.map((i) => i + 100);
    });
    const results = await Promise.allSettled([1, 2, 13, 4].map((i) => batcher.run(i)));
    expect(results.map((r) => r.status)).toEqual(["fulfilled", "fulfilled", "rejected", "fulfilled"]);
    expect(results.filter((r) => r.status === "fulfilled").map((r) => (r as PromiseFulfilledResult<number>).value)).toEqual([101, 102, 104]);
    expect(((results[2] as PromiseRejectedResult).reason as Error).message).toBe("invalid input syntax");
    // The whole batch once, then each member alone.
    expect(seen).toEqual([[1, 2, 13, 4], [1], [2], [13], [4]]);
  });

  it("retries a batch that hit a deadlock or serialisation failure, and gives up after three tries", async () => {
    let calls = 0;
    const flaky = createBatcher<string, string>(async (items) => {
      calls += 1;
      if (calls < 3) throw Object.assign(new Error("deadlock detected"), { code: calls === 1 ? "40P01" : "40001" });
      return items.map((i) => i.toUpperCase());
    });
    expect(await Promise.all(["a", "b"].map((i) => flaky.run(i)))).toEqual(["A", "B"]);
    expect(calls).toBe(3);

    let stuck = 0;
    const hopeless = createBatcher<string, string>(async () => {
      stuck += 1;
      throw Object.assign(new Error("deadlock detected"), { code: "40P01" });
    });
    await expect(hopeless.run("x")).rejects.toThrow("deadlock detected");
    expect(stuck).toBe(3);
  });
});
