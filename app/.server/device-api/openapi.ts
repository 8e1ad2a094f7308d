// The device API's OpenAPI 3.1 document, generated from the same zod schemas the routes use.
import { OpenAPIRegistry, OpenApiGeneratorV31 } from "@asteasolutions/zod-to-openapi";
import { z } from "zod";
import {
  AckRequestSchema,
  ConfigResponseSchema,
  DigestBatchDocSchema,
  DigestBatchResponseSchema,
  EnrolRequestSchema,
  EnrolResponseSchema,
  ErrorSchema,
} from "./schemas";

const json = (schema: z.ZodType, description: string) => ({ description, content: { "application/json": { schema } } });
const refused = json(ErrorSchema, "The device could not be authenticated. `error.code` names the reason: missing_token, malformed_token, unsupported_alg, unknown_key, bad_signature, wrong_audience, wrong_issuer, token_expired, token_not_yet_valid, token_lifetime_too_long, bad_jti, token_replayed, device_revoked, machine_decommissioned.");

let cached: ReturnType<OpenApiGeneratorV31["generateDocument"]> | undefined;

export function getDeviceApiDocument() {
  if (cached) return cached;
  const registry = new OpenAPIRegistry();
  const bearer = registry.registerComponent("securitySchemes", "deviceJwt", {
    type: "http",
    scheme: "bearer",
    bearerFormat: "JWT",
    description:
      "A JWT signed with the device's enrolled private key. Header: alg EdDSA or ES256 (matching the enrolled key), kid = device id. Claims: iss = device id, aud = flyball-device, iat, exp (at most 300 s after iat), jti (unique per request). 60 s of clock skew is tolerated.",
  });
  registry.registerPath({
    method: "post",
    path: "/api/v1/device/enrol",
    summary: "Enrol a device with a one-time code",
    description: "Binds the device's public key to the machine the code was issued for. The code works once and expires after 7 days. Enrolling again replaces the previous key.",
    request: { body: { content: { "application/json": { schema: EnrolRequestSchema } } } },
    responses: { 201: json(EnrolResponseSchema, "Enrolled."), 400: json(ErrorSchema, "The body is not valid."), 401: json(ErrorSchema, "The code is not valid (unknown, used, replaced or expired).") },
  });
  registry.registerPath({
    method: "post",
    path: "/api/v1/device/digests",
    summary: "Post performance digests",
    description: "At most 500 digests and 256 KiB per call. Idempotent on (loop, seq). Valid digests are stored even when others in the batch are refused; `rejected` names the refused ones by index.",
    security: [{ [bearer.name]: [] }],
    request: { body: { content: { "application/json": { schema: DigestBatchDocSchema } } } },
    responses: {
      200: json(DigestBatchResponseSchema, "Stored what was valid."),
      400: json(ErrorSchema, "The body is not a batch."),
      401: refused,
      413: json(ErrorSchema, "More than 256 KiB or more than 500 digests."),
      429: { description: "Too many requests from this device; wait the seconds in Retry-After.", headers: { "Retry-After": { schema: { type: "integer" } } }, content: { "application/json": { schema: ErrorSchema } } },
    },
  });
  registry.registerPath({
    method: "get",
    path: "/api/v1/device/config",
    summary: "Pull the signed configuration",
    description:
      "The gains assigned to this machine's loops, as a JWS signed by the organisation's Ed25519 key (keys at /api/v1/o/{slug}/jwks.json). Each loop carries a version that only increases; the JWS expires. Send If-None-Match with the last ETag to get 304 when nothing changed.",
    security: [{ [bearer.name]: [] }],
    request: { headers: z.object({ "if-none-match": z.string().optional() }) },
    responses: {
      200: {
        description:
          "The configuration as a compact JWS (application/jose; Link header rel=\"jwks\" gives the key set). Its payload holds iss (flyball:<slug>), aud (device id), sub (machine id), iat, exp and loops: [{key, version, form, gains {kp, ki, kd}, outputMin, outputMax, samplePeriod}]. With Accept: application/json the JWS comes wrapped as a ConfigResponse.",
        content: {
          "application/jose": { schema: { type: "string", description: "Compact JWS (EdDSA, typ flyball-config+jwt)." } },
          "application/json": { schema: ConfigResponseSchema },
        },
      },
      304: { description: "Unchanged since the ETag given." },
      401: refused,
    },
  });
  registry.registerPath({
    method: "post",
    path: "/api/v1/device/config/ack",
    summary: "Acknowledge a loop's configuration",
    security: [{ [bearer.name]: [] }],
    request: { body: { content: { "application/json": { schema: AckRequestSchema } } } },
    responses: {
      200: json(z.object({ loop: z.string(), version: z.number().int(), status: z.enum(["applied", "rejected"]), currentVersion: z.number().int() }), "Recorded."),
      400: json(ErrorSchema, "The body is not valid."),
      401: refused,
      404: json(ErrorSchema, "No such loop on this machine."),
      409: json(ErrorSchema, "That version was never issued."),
    },
  });
  cached = new OpenApiGeneratorV31(registry.definitions).generateDocument({
    openapi: "3.1.0",
    info: { title: "Flyball device API", version: "1.0.0", description: "How a machine's controller board enrols, posts loop performance digests and pulls its gains." },
    servers: [{ url: "/" }],
  });
  return cached;
}
