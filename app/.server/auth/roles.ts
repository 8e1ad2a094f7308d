// better-auth access control built from the one role table in ~/lib/access/capabilities.
import { createAccessControl } from "better-auth/plugins/access";
import { defaultStatements } from "better-auth/plugins/organization/access";
import { CAPABILITIES, capabilitiesOf, ROLES, type Role } from "~/lib/access/capabilities";

export const statements = { ...defaultStatements, flyball: CAPABILITIES } as const;
export const ac = createAccessControl(statements);

const organisationAdministration = {
  owner: { organization: ["update", "delete"], member: ["create", "update", "delete"], invitation: ["create", "cancel"] },
  admin: { organization: ["update"], member: ["create", "update", "delete"], invitation: ["create", "cancel"] },
} as const;

export const roles = Object.fromEntries(
  ROLES.map((role) => [
    role,
    ac.newRole({
      ...(role === "owner" || role === "admin" ? organisationAdministration[role] : {}),
      flyball: capabilitiesOf(role),
    }),
  ]),
) as unknown as Record<Role, ReturnType<typeof ac.newRole>>;
