// The device API's contract as zod schemas: the routes validate with
// them and the OpenAPI document at /api/v1/openapi.json is generated from them.
import { z } from "zod";
import { DIGEST_FIELDS, INT32_MAX, type DigestField, type DigestFieldName } from "~/lib/health/digest-fields";
import { MAX_DIGESTS_PER_BATCH } from "./limits";

export const LOOP_KEY_PATTERN = /^[a-z][a-z0-9_]{0,39}$/;

export const ErrorSchema = z
  .object({
    error: z.object({
      code: z.string().meta({ example: "invalid_body" }),
      message: z.string(),
      issues: z.array(z.object({ path: z.array(z.union([z.string(), z.number()])), message: z.string() })).optional(),
    }),
  })
  .meta({ id: "Error" });

const Base64Url = z.string().regex(/^[A-Za-z0-9_-]+$/, "Must be base64url.");

// Strict objects: a private key sent by mistake (with `d`) is refused outright, never stored.
const JwkExtras = { alg: z.enum(["EdDSA", "ES256"]).optional(), use: z.literal("sig").optional(), kid: z.string().max(128).optional() };
export const PublicJwkSchema = z
  .discriminatedUnion("kty", [
    z.strictObject({ kty: z.literal("OKP"), crv: z.literal("Ed25519"), x: Base64Url.length(43), ...JwkExtras }),
    z.strictObject({ kty: z.literal("EC"), crv: z.literal("P-256"), x: Base64Url.length(43), y: Base64Url.length(43), ...JwkExtras }),
  ])
  .meta({ id: "DevicePublicJwk", description: "The device's public key as a JWK: Ed25519 (alg EdDSA) or P-256 (alg ES256). Never send the private part `d`." });

export const EnrolRequestSchema = z
  .object({
    enrolmentCode: z.string().trim().min(8).max(64).meta({ example: "FB-7KQ2M-RX4PA-9HTWE-C3NVB" }),
    publicKey: PublicJwkSchema,
    firmware: z.string().trim().min(1).max(64).optional().meta({ example: "4.2.1" }),
  })
  .meta({ id: "EnrolRequest" });

export const EnrolResponseSchema = z
  .object({
    machineId: z.uuid(),
    deviceId: z.uuid().meta({ description: "Use as the JWT `kid` and `iss`." }),
    alg: z.enum(["EdDSA", "ES256"]),
    loopKeys: z.array(z.string()),
    jwksUrl: z.string().meta({ description: "Where the organisation's config-signing public keys are published." }),
  })
  .meta({ id: "EnrolResponse" });

/** The zod check of one measured field, from its kind and bounds (app/lib/health/digest-fields.ts). */
function fieldSchema(field: DigestField) {
  const base =
    field.kind === "count"
      ? z.number().int("Must be an integer.").min(field.min ?? 0, `Must be at least ${field.min ?? 0}.`).max(field.max ?? INT32_MAX, `Must be at most ${field.max ?? INT32_MAX}.`)
      : field.kind === "fraction"
        ? z.number().finite("Must be a finite number.").min(0, "Must be between 0 and 1.").max(1, "Must be between 0 and 1.")
        : field.kind === "magnitude"
          ? z.number().finite("Must be a finite number.").min(0, "Must not be negative.")
          : z.number().finite("Must be a finite number.");
  return base.meta({ description: `${field.description} (${field.unit})`, example: field.example });
}

const measured = Object.fromEntries(DIGEST_FIELDS.map((f) => [f.name, fieldSchema(f)])) as { [K in DigestFieldName]: ReturnType<typeof fieldSchema> };

export const DigestSchema = z
  .object({
    loop: z.string().regex(LOOP_KEY_PATTERN, "Must be a loop key such as zone_1.").meta({ description: "Loop template key.", example: "zone_1" }),
    seq: z.number().int().min(0).max(INT32_MAX).meta({ description: "Increasing per loop; (loop, seq) makes a retry harmless." }),
    windowStart: z.iso.datetime({ offset: true, message: "Must be an ISO 8601 time." }),
    windowEnd: z.iso.datetime({ offset: true, message: "Must be an ISO 8601 time." }),
    ...measured,
  })
  .meta({ id: "Digest" });
export type DigestInput = z.infer<typeof DigestSchema>;

export { MAX_DIGESTS_PER_BATCH };

export const DigestBatchSchema = z
  .object({ digests: z.array(z.unknown()).min(1, "Send at least one digest.").max(MAX_DIGESTS_PER_BATCH) })
  .meta({ id: "DigestBatch" });

/** For the document: the batch as devices should send it. */
export const DigestBatchDocSchema = z.object({ digests: z.array(DigestSchema).min(1).max(MAX_DIGESTS_PER_BATCH) }).meta({ id: "DigestBatch" });

export const DigestBatchResponseSchema = z
  .object({
    accepted: z.number().int(),
    duplicates: z.number().int(),
    rejected: z.array(z.object({ index: z.number().int(), code: z.string(), message: z.string() })),
  })
  .meta({ id: "DigestBatchResult" });

export const ConfigLoopSchema = z
  .object({
    key: z.string(),
    version: z.number().int().meta({ description: "Increases with every change to this loop's gains (a roll back too). Refuse a version lower than the one applied." }),
    gainSetId: z.uuid().nullable().meta({ description: "The released gain set; null = the loop template's defaults." }),
    form: z.literal("parallel").meta({ description: "Gains are always sent in parallel form." }),
    gains: z.object({ kp: z.number(), ki: z.number().meta({ description: "1/s" }), kd: z.number().meta({ description: "s" }) }),
    filterN: z.number().meta({ description: "Derivative filter N (Tf = Td/N)." }),
    setpointWeight: z.number().meta({ description: "Set-point weight b on the proportional term." }),
    antiWindup: z.enum(["clamp", "back_calculation"]),
    trackingTime: z.number().nullable().meta({ description: "Back-calculation tracking time Tt in s; null = the controller's default." }),
    integratorMin: z.number().nullable().meta({ description: "Integrator limits; null = derived from the output range." }),
    integratorMax: z.number().nullable(),
    outputMin: z.number(),
    outputMax: z.number(),
    samplePeriod: z.number().meta({ description: "s" }),
  })
  .meta({ id: "ConfigLoop" });

export const ConfigPayloadSchema = z
  .object({
    iss: z.string().meta({ description: "`flyball:<organisation slug>`" }),
    aud: z.string().meta({ description: "The device id." }),
    sub: z.string().meta({ description: "The machine id." }),
    iat: z.number().int(),
    exp: z.number().int(),
    loops: z.array(ConfigLoopSchema),
  })
  .meta({ id: "ConfigPayload", description: "The claims inside the signed configuration." });

export const ConfigResponseSchema = z
  .object({
    jws: z.string().meta({ description: "Compact JWS (EdDSA, typ flyball-config+jwt) whose payload is a ConfigPayload. Verify it against the JWKS before use." }),
    expiresAt: z.iso.datetime(),
    jwksUrl: z.string(),
  })
  .meta({ id: "ConfigResponse" });

export const AckRequestSchema = z
  .object({
    loop: z.string().regex(LOOP_KEY_PATTERN, "Must be a loop key."),
    version: z.number().int().min(1).max(2_147_483_647),
    status: z.enum(["applied", "rejected"]),
    reason: z.string().trim().max(500).optional(),
  })
  .meta({ id: "ConfigAck" });
