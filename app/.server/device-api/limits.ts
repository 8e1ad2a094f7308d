// The device API's request limits in one table: each route's largest body, read by the route
// itself (through readJsonBody) and by the lean path in scripts/serve.js, which never keeps
// more than this of a device's body in memory.
export const DEVICE_API_PATHS = {
  enrol: "/api/v1/device/enrol",
  digests: "/api/v1/device/digests",
  config: "/api/v1/device/config",
  ack: "/api/v1/device/config/ack",
} as const;

export const MAX_DIGESTS_PER_BATCH = 500;

/** Bytes of body each device route accepts (0: the route takes no body). */
export const DEVICE_BODY_LIMITS: Record<(typeof DEVICE_API_PATHS)[keyof typeof DEVICE_API_PATHS], number> = {
  [DEVICE_API_PATHS.enrol]: 16 * 1024,
  [DEVICE_API_PATHS.digests]: 256 * 1024,
  [DEVICE_API_PATHS.config]: 0,
  [DEVICE_API_PATHS.ack]: 8 * 1024,
};
