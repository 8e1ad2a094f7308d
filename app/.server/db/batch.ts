// Group commit for hot statements. Devices call the API concurrently, and most of the cost
// of a small statement in PostgreSQL is per statement (round trip, executor start, commit),
// not per row. A batcher gathers the items that arrive while earlier statements are running
// and hands them to one statement that takes arrays (unnest) and answers per item.
//
// Built on DataLoader (no caching: every item is new). Its batch schedule is held back while
// `maxInFlight` statements are running, so under load the batches grow by themselves and at
// rest an item waits at most one turn of the event loop.
//
// One bad item must not fail the others: when a grouped statement fails for any reason but a
// retryable conflict, its items are run again one at a time, so only the culprit's caller sees
// the error.
import DataLoader from "dataloader";

export type Batcher<I, O> = { run(item: I): Promise<O> };

/** Errors PostgreSQL may raise when concurrent batches touch the same rows; safe to retry. */
const RETRYABLE = new Set(["40P01", "40001"]);

export function createBatcher<I, O>(
  runBatch: (items: readonly I[]) => Promise<readonly (O | Error)[]>,
  { maxInFlight = 2, maxBatchSize = 256 }: { maxInFlight?: number; maxBatchSize?: number } = {},
): Batcher<I, O> {
  let inFlight = 0;
  const waiting: (() => void)[] = [];

  const release = () => {
    inFlight -= 1;
    const next = waiting.shift();
    if (next) next();
  };

  const loader = new DataLoader<I, O>(
    async (items) => {
      try {
        return await runIsolated(runBatch, items);
      } finally {
        release();
      }
    },
    {
      cache: false,
      maxBatchSize,
      batchScheduleFn: (dispatch) => {
        const start = () => {
          inFlight += 1;
          dispatch();
        };
        if (inFlight < maxInFlight) {
          inFlight += 1;
          setImmediate(dispatch);
        } else waiting.push(start);
      },
    },
  );
  return { run: (item) => loader.load(item) };
}

async function runIsolated<I, O>(runBatch: (items: readonly I[]) => Promise<readonly (O | Error)[]>, items: readonly I[]): Promise<readonly (O | Error)[]> {
  try {
    return await runWithRetry(runBatch, items);
  } catch (error) {
    if (items.length === 1) throw error;
    const answers: (O | Error)[] = [];
    for (const item of items) {
      try {
        answers.push((await runWithRetry(runBatch, [item]))[0]);
      } catch (alone) {
        answers.push(alone instanceof Error ? alone : new Error(String(alone)));
      }
    }
    return answers;
  }
}

async function runWithRetry<I, O>(runBatch: (items: readonly I[]) => Promise<readonly (O | Error)[]>, items: readonly I[]) {
  for (let attempt = 0; ; attempt++) {
    try {
      return await runBatch(items);
    } catch (error) {
      if (attempt >= 2 || !RETRYABLE.has((error as { code?: string }).code ?? "")) throw error;
    }
  }
}
