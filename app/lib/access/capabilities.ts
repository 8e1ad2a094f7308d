// The one place the role table lives. Pure: the UI uses it to hide
// what a role cannot do, and every server guard asks the same question.

export const ROLES = ["owner", "admin", "engineer", "site_manager", "viewer"] as const;
export type Role = (typeof ROLES)[number];

export const ROLE_LABELS: Record<Role, string> = {
  owner: "Owner",
  admin: "Admin",
  engineer: "Engineer",
  site_manager: "Site manager",
  viewer: "Viewer",
};

export const CAPABILITIES = [
  "billing:manage",
  "members:manage",
  "team:read",
  "registry:read",
  "registry:manage",
  "machines:manage",
  "tuning:use",
  "gainset:approve",
  "release:operate",
  "fleet:read",
  "findings:triage",
  "retune:request",
  "audit:read",
] as const;
export type Capability = (typeof CAPABILITIES)[number];

const ROLE_TABLE: Record<Role, readonly Capability[]> = {
  owner: [
    "billing:manage",
    "members:manage",
    "team:read",
    "registry:read",
    "registry:manage",
    "machines:manage",
    "tuning:use",
    "gainset:approve",
    "release:operate",
    "fleet:read",
    "findings:triage",
    "audit:read",
  ],
  admin: [
    "members:manage",
    "team:read",
    "registry:read",
    "registry:manage",
    "machines:manage",
    "tuning:use",
    "gainset:approve",
    "release:operate",
    "fleet:read",
    "findings:triage",
    "audit:read",
  ],
  engineer: [
    "team:read",
    "registry:read",
    "registry:manage",
    "machines:manage",
    "tuning:use",
    "gainset:approve",
    "release:operate",
    "fleet:read",
    "findings:triage",
    "audit:read",
  ],
  // Site managers read and triage only within their assigned sites; the server applies the scope.
  site_manager: ["fleet:read", "findings:triage", "retune:request"],
  // Seeing who is in the team: every OEM-side role may (site managers are the OEM's customers).
  // Models and loop templates (default gains, envelopes, thresholds) are the OEM's own: every
  // OEM-side role reads them, site managers do not.
  viewer: ["fleet:read", "registry:read", "team:read"],
};

export function isRole(value: unknown): value is Role {
  return typeof value === "string" && (ROLES as readonly string[]).includes(value);
}

/** Whether a role holds a capability. Unknown roles hold nothing. */
export function can(role: string | null | undefined, capability: Capability): boolean {
  if (!isRole(role)) return false;
  return ROLE_TABLE[role].includes(capability);
}

/** Whether members of this role see only their assigned sites. */
export function isSiteScoped(role: string): boolean {
  return role === "site_manager";
}

/** Every capability a role holds, for display. */
export function capabilitiesOf(role: string): Capability[] {
  return isRole(role) ? [...ROLE_TABLE[role]] : [];
}

/**
 * Who may set which role on whom. Only owners grant or take away ownership; an admin
 * can neither demote nor remove an owner.
 */
export function canAssignRole(actorRole: string, targetCurrentRole: string, newRole: string): boolean {
  if (!can(actorRole, "members:manage") || !isRole(newRole)) return false;
  if (actorRole === "owner") return true;
  return targetCurrentRole !== "owner" && newRole !== "owner";
}

export function canRemoveMember(actorRole: string, targetRole: string): boolean {
  if (!can(actorRole, "members:manage")) return false;
  return actorRole === "owner" || targetRole !== "owner";
}
