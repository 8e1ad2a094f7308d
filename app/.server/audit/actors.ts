// Names for the actors the audit log and gain-set history record: user ids, `token:<id>`,
// `device:<id>` and `system`.
import { and, eq, inArray } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { apiToken, user } from "~/.server/db/schema";

export type ActorName = { id: string; name: string; email: string | null; kind: "user" | "token" | "device" | "system" };

export async function describeActors(db: Db, { organisationId }: { organisationId: string }, ids: Iterable<string>): Promise<Map<string, ActorName>> {
  const all = [...new Set(ids)];
  const out = new Map<string, ActorName>();
  const userIds = all.filter((id) => !id.includes(":") && id !== "system");
  const tokenIds = all.filter((id) => id.startsWith("token:")).map((id) => id.slice(6)).filter((id) => /^[0-9a-f-]{36}$/i.test(id));
  if (userIds.length) {
    for (const u of await db.select({ id: user.id, name: user.name, email: user.email }).from(user).where(inArray(user.id, userIds))) {
      out.set(u.id, { id: u.id, name: u.name, email: u.email, kind: "user" });
    }
  }
  if (tokenIds.length) {
    const rows = await db
      .select({ id: apiToken.id, name: apiToken.name })
      .from(apiToken)
      .where(and(eq(apiToken.organisationId, organisationId), inArray(apiToken.id, tokenIds)));
    for (const t of rows) out.set(`token:${t.id}`, { id: `token:${t.id}`, name: `API token “${t.name}”`, email: null, kind: "token" });
  }
  for (const id of all) {
    if (out.has(id)) continue;
    if (id === "system") out.set(id, { id, name: "Flyball", email: null, kind: "system" });
    else if (id.startsWith("device:")) out.set(id, { id, name: `Device ${id.slice(7, 15)}`, email: null, kind: "device" });
    else if (id.startsWith("token:")) out.set(id, { id, name: "API token (removed)", email: null, kind: "token" });
    else out.set(id, { id, name: "Former member", email: null, kind: "user" });
  }
  return out;
}
