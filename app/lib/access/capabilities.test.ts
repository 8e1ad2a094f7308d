import { describe, expect, it } from "vitest";
import { can, canAssignRole, canRemoveMember, capabilitiesOf, ROLES } from "./capabilities";

// The product's role table, row by row.
describe("can", () => {
  it.each([
    ["billing:manage", ["owner"]],
    ["members:manage", ["owner", "admin"]],
    ["team:read", ["owner", "admin", "engineer", "viewer"]],
    ["registry:read", ["owner", "admin", "engineer", "viewer"]],
    ["registry:manage", ["owner", "admin", "engineer"]],
    ["machines:manage", ["owner", "admin", "engineer"]],
    ["tuning:use", ["owner", "admin", "engineer"]],
    ["gainset:approve", ["owner", "admin", "engineer"]],
    ["release:operate", ["owner", "admin", "engineer"]],
    ["fleet:read", ["owner", "admin", "engineer", "site_manager", "viewer"]],
    ["findings:triage", ["owner", "admin", "engineer", "site_manager"]],
    ["retune:request", ["site_manager"]],
    ["audit:read", ["owner", "admin", "engineer"]],
  ] as const)("%s is held by exactly %j", (capability, holders) => {
    for (const role of ROLES) {
      expect(can(role, capability), `${role} → ${capability}`).toBe((holders as readonly string[]).includes(role));
    }
  });

  it("grants nothing to an unknown or missing role", () => {
    expect(can("member", "fleet:read")).toBe(false);
    expect(can(undefined, "fleet:read")).toBe(false);
    expect(capabilitiesOf("superuser")).toEqual([]);
  });
});

describe("role changes", () => {
  it("lets an admin change engineers but never touch an owner", () => {
    expect(canAssignRole("admin", "engineer", "viewer")).toBe(true);
    expect(canAssignRole("admin", "owner", "admin")).toBe(false);
    expect(canAssignRole("admin", "engineer", "owner")).toBe(false);
    expect(canRemoveMember("admin", "owner")).toBe(false);
    expect(canRemoveMember("owner", "owner")).toBe(true);
  });

  it("refuses role changes from roles without member management", () => {
    expect(canAssignRole("engineer", "viewer", "admin")).toBe(false);
    expect(canAssignRole("owner", "viewer", "superuser")).toBe(false);
  });
});
