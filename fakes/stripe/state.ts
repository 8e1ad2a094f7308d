// The fake's whole state: one JSON file, written after every change (write, then rename, so a
// crash never leaves half a file) and read back at start, so a restart loses nothing.
import { randomBytes } from "node:crypto";
import { existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from "node:fs";
import path from "node:path";

// Stored objects are Stripe's JSON as the API returns it; their shapes are checked where it
// matters, by the tests through the SDK's own types, so the fake keeps them loose.
export type StripeObject = { id: string; object: string; [field: string]: any };

export type IdempotencyEntry = { method: string; path: string; body: string; status: number; response: string; at: number };
export type Delivery = { eventId: string; attempts: number; nextAttemptAt: number; lastError: string | null };

export type State = {
  version: 1;
  seq: number;
  invoiceNumber: number;
  objects: Record<string, StripeObject>;
  /** Creation order of every object: lists are newest first, and `created` may repeat under a test clock. */
  order: Record<string, number>;
  idempotency: Record<string, IdempotencyEntry>;
  deliveries: Delivery[];
};

const ALPHABET = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz";

/** An id with Stripe's prefix and a random base-62 tail, e.g. `cus_Q3x…`. */
export function newId(prefix: string, length = 24): string {
  const bytes = randomBytes(length);
  let tail = "";
  for (const byte of bytes) tail += ALPHABET[byte % ALPHABET.length];
  return `${prefix}_${tail}`;
}

export function emptyState(): State {
  return { version: 1, seq: 0, invoiceNumber: 0, objects: {}, order: {}, idempotency: {}, deliveries: [] };
}

export function loadState(dataDir: string): State {
  mkdirSync(dataDir, { recursive: true });
  const file = path.join(dataDir, "state.json");
  if (!existsSync(file)) return emptyState();
  return { ...emptyState(), ...(JSON.parse(readFileSync(file, "utf8")) as State) };
}

export function saveState(dataDir: string, state: State) {
  const file = path.join(dataDir, "state.json");
  writeFileSync(`${file}.tmp`, JSON.stringify(state));
  renameSync(`${file}.tmp`, file);
}
