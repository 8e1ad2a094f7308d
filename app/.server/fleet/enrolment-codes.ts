// One-time enrolment codes: shown once, stored as SHA-256, valid for 7 days, one live code
// per machine (a new code supersedes the old).
import { createHash, randomBytes } from "node:crypto";
import { and, eq, isNull } from "drizzle-orm";
import type { Db } from "~/.server/db/client";
import { enrolmentCode } from "~/.server/db/schema";

export const ENROLMENT_CODE_DAYS = 7;
const ALPHABET = "ABCDEFGHJKMNPQRSTVWXYZ23456789"; // no I, L, O, U, 0, 1: easy to read aloud

/** `FB-XXXXX-XXXXX-XXXXX-XXXXX` (about 98 bits). */
export function generateEnrolmentCode(): string {
  const bytes = randomBytes(20);
  let out = "";
  for (let i = 0; i < 20; i++) out += ALPHABET[bytes[i] % ALPHABET.length];
  return `FB-${out.slice(0, 5)}-${out.slice(5, 10)}-${out.slice(10, 15)}-${out.slice(15, 20)}`;
}

/** Case, spaces and hyphens do not matter when a person types the code. */
export function hashEnrolmentCode(code: string): string {
  const normal = code.toUpperCase().replace(/[\s-]/g, "");
  return createHash("sha256").update(normal).digest("hex");
}

export async function issueEnrolmentCode(
  db: Db,
  { organisationId, machineId, actor, now = new Date() }: { organisationId: string; machineId: string; actor: string; now?: Date },
): Promise<{ code: string; expiresAt: Date }> {
  await db
    .update(enrolmentCode)
    .set({ supersededAt: now })
    .where(and(eq(enrolmentCode.organisationId, organisationId), eq(enrolmentCode.machineId, machineId), isNull(enrolmentCode.usedAt), isNull(enrolmentCode.supersededAt)));
  const code = generateEnrolmentCode();
  const expiresAt = new Date(now.getTime() + ENROLMENT_CODE_DAYS * 86_400_000);
  await db.insert(enrolmentCode).values({ organisationId, machineId, codeHash: hashEnrolmentCode(code), expiresAt, createdBy: actor });
  return { code, expiresAt };
}
