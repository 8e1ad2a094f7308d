// A device's configuration round: pull (with its ETag), verify against the pinned JWKS, decide
// per loop, apply the higher versions (the caller's `apply`, bumpless in the simulator) and
// acknowledge each decision: `applied`, or `rejected` with the reason for a lower version.
// Used by the fleet simulator and by the integration tests.
import type { DeviceClient } from "./device-client";
import { ConfigRefused, decideLoops, verifyConfig, type ConfigLoop, type LoopDecision, type PinnedJwks } from "./config-verifier";

export type SyncResult =
  | { status: "unchanged" }
  | { status: "refused"; code: ConfigRefused["code"]; message: string }
  | { status: "done"; decisions: LoopDecision[] };

export async function syncConfig(
  client: DeviceClient,
  state: { pin: PinnedJwks; etag?: string; applied: Map<string, number> },
  apply: (loop: ConfigLoop) => void,
  send: (request: () => Promise<Response>) => Promise<Response> = (request) => request(),
): Promise<SyncResult> {
  const response = await send(() => client.getConfig(state.etag));
  if (response.status === 304) return { status: "unchanged" };
  if (!response.ok) throw new Error(`config pull answered ${response.status}`);
  const jws = await response.text();
  let config;
  try {
    config = await verifyConfig(jws, state.pin, client.deviceId);
  } catch (error) {
    if (error instanceof ConfigRefused) return { status: "refused", code: error.code, message: error.message };
    throw error;
  }
  const decisions = decideLoops(config, state.applied);
  for (const d of decisions) {
    if (d.action === "keep") continue;
    if (d.action === "apply") {
      apply(d.loop);
      state.applied.set(d.key, d.loop.version);
      await send(() => client.ack({ loop: d.key, version: d.loop.version, status: "applied" }));
    } else {
      await send(() => client.ack({ loop: d.key, version: d.version, status: "rejected", reason: d.reason }));
    }
  }
  // Only a fully handled configuration is remembered, so a failure above is retried.
  state.etag = response.headers.get("etag") ?? undefined;
  return { status: "done", decisions };
}
