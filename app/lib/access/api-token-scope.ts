// What an organisation API token may do. A token stands in for no person, so it never holds
// member management, billing or the audit log, whoever created it. Pure: the developer page
// shows these lists and the API guard asks the same question.
import type { Capability } from "./capabilities";

export const TOKEN_SCOPES = ["read", "write"] as const;
export type TokenScope = (typeof TOKEN_SCOPES)[number];

export const TOKEN_SCOPE_LABELS: Record<TokenScope, string> = {
  read: "Read",
  write: "Read and write",
};

export const TOKEN_SCOPE_HELP: Record<TokenScope, string> = {
  read: "Fleet, loops and findings, like a viewer.",
  write: "Also the registry, machines and the tuning bench, like an engineer.",
};

const SCOPE_TABLE: Record<TokenScope, readonly Capability[]> = {
  read: ["fleet:read", "registry:read"],
  write: ["fleet:read", "registry:read", "registry:manage", "machines:manage", "tuning:use"],
};

export function isTokenScope(value: unknown): value is TokenScope {
  return typeof value === "string" && (TOKEN_SCOPES as readonly string[]).includes(value);
}

/** Whether a token of this scope holds a capability. Unknown scopes hold nothing. */
export function tokenCan(scope: string, capability: Capability): boolean {
  return isTokenScope(scope) && SCOPE_TABLE[scope].includes(capability);
}
