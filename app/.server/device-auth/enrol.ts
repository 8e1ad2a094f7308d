// POST /api/v1/device/enrol: trade a one-time enrolment code for a registered device key.
import { DomainError } from "~/lib/errors";
import { and, asc, eq, gt, isNull } from "drizzle-orm";
import { calculateJwkThumbprint, importJWK } from "jose";
import type { z } from "zod";
import { recordAudit } from "~/.server/audit/record-audit";
import type { Db } from "~/.server/db/client";
import { device, enrolmentCode, loop, machine, organisation } from "~/.server/db/schema";
import { hashEnrolmentCode } from "~/.server/fleet/enrolment-codes";
import type { EnrolRequestSchema } from "~/.server/device-api/schemas";

export async function enrolDevice(db: Db, input: z.infer<typeof EnrolRequestSchema>) {
  const alg = input.publicKey.kty === "OKP" ? "EdDSA" : "ES256";
  const jwk: Record<string, string> =
    input.publicKey.kty === "OKP" ? { kty: "OKP", crv: "Ed25519", x: input.publicKey.x } : { kty: "EC", crv: "P-256", x: input.publicKey.x, y: input.publicKey.y };
  try {
    // Refuses points that are not on the curve.
    await importJWK({ ...jwk, alg }, alg);
  } catch {
    throw new DomainError("invalid_public_key", "The public key is not a valid Ed25519 or P-256 key.");
  }
  const thumbprint = await calculateJwkThumbprint(jwk as Parameters<typeof calculateJwkThumbprint>[0]);
  const now = new Date();
  return db.transaction(async (tx) => {
    // Claim the code: single use, unexpired, not replaced, machine still in service.
    const [claimed] = await tx
      .update(enrolmentCode)
      .set({ usedAt: now })
      .where(and(eq(enrolmentCode.codeHash, hashEnrolmentCode(input.enrolmentCode)), isNull(enrolmentCode.usedAt), isNull(enrolmentCode.supersededAt), gt(enrolmentCode.expiresAt, now)))
      .returning({ organisationId: enrolmentCode.organisationId, machineId: enrolmentCode.machineId });
    // Every kind of bad code gets the same answer, so codes cannot be probed.
    if (!claimed) throw new DomainError("invalid_enrolment_code", "The enrolment code is not valid. Ask for a new one.", { status: 401 });
    const { organisationId, machineId } = claimed;
    const [target] = await tx
      .select({ id: machine.id, status: machine.status, serial: machine.serial, slug: organisation.slug })
      .from(machine)
      .innerJoin(organisation, eq(organisation.id, machine.organisationId))
      .where(and(eq(machine.organisationId, organisationId), eq(machine.id, machineId)))
      .for("update", { of: machine });
    if (!target || target.status !== "active") throw new DomainError("invalid_enrolment_code", "The enrolment code is not valid. Ask for a new one.", { status: 401 });
    // A machine has one live device key: enrolling again replaces the previous one.
    const replaced = await tx
      .update(device)
      .set({ status: "revoked", revokedAt: now })
      .where(and(eq(device.organisationId, organisationId), eq(device.machineId, machineId), eq(device.status, "active")))
      .returning({ id: device.id });
    const [created] = await tx
      .insert(device)
      .values({ organisationId, machineId, alg, publicJwk: jwk, thumbprint, firmware: input.firmware ?? null })
      .returning({ id: device.id });
    if (input.firmware) await tx.update(machine).set({ firmware: input.firmware }).where(and(eq(machine.organisationId, organisationId), eq(machine.id, machineId)));
    const loops = await tx.select({ key: loop.key }).from(loop).where(and(eq(loop.organisationId, organisationId), eq(loop.machineId, machineId))).orderBy(asc(loop.key));
    await recordAudit(tx, {
      organisationId,
      actor: `device:${created.id}`,
      action: "device.enrolled",
      targetType: "machine",
      targetId: machineId,
      detail: { serial: target.serial, deviceId: created.id, alg, thumbprint, replaced: replaced.map((r) => r.id), firmware: input.firmware ?? null },
      before: { activeDevices: replaced.map((r) => r.id) },
      after: { activeDevices: [created.id], alg, thumbprint, firmware: input.firmware ?? null },
    });
    return { machineId, deviceId: created.id, alg: alg as "EdDSA" | "ES256", loopKeys: loops.map((l) => l.key), jwksUrl: `/api/v1/o/${target.slug}/jwks.json` };
  });
}
