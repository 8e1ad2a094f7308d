// A token bucket per device and process: short bursts pass, a steady flood gets 429 with
// Retry-After. Per process on purpose (cheap, no round trip); with several app processes a
// device's allowance is at most that many times larger, which is what the limit is for: to
// keep one misbehaving device from starving the others.
const buckets = new Map<string, { tokens: number; at: number }>();

let cached: { rate: number; burst: number } | undefined;

/** Read once: process.env is slow to read on every request. */
function settings() {
  if (!cached) {
    const rate = Number(process.env.DEVICE_RATE_PER_SECOND ?? 10);
    const burst = Number(process.env.DEVICE_RATE_BURST ?? 60);
    cached = { rate: rate > 0 ? rate : 10, burst: burst > 0 ? burst : 60 };
  }
  return cached;
}

/** null when the request may go ahead; otherwise the seconds to wait. */
export function takeDeviceToken(deviceId: string, now = Date.now()): number | null {
  const { rate, burst } = settings();
  let bucket = buckets.get(deviceId);
  if (!bucket) {
    if (buckets.size > 100_000) buckets.clear();
    buckets.set(deviceId, (bucket = { tokens: burst, at: now }));
  }
  bucket.tokens = Math.min(burst, bucket.tokens + ((now - bucket.at) / 1000) * rate);
  bucket.at = now;
  if (bucket.tokens >= 1) {
    bucket.tokens -= 1;
    return null;
  }
  return Math.max(1, Math.ceil((1 - bucket.tokens) / rate));
}
