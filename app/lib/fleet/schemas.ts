// The fleet's form and query schemas: what the server validates, and what a browser form may
// check before sending. Pure (no server imports).
import { z } from "zod";
import { HEALTH_BANDS, type HealthBand } from "~/lib/health";

/** Form fields and query parameters arrive as "" when left empty: read that as absent. */
export function blankAsAbsent<S extends z.ZodType>(schema: S) {
  return z.preprocess((v) => (v === "" || v === null ? undefined : v), schema);
}

export const optionalId = blankAsAbsent(z.uuid("Must be an id.").optional());

const pageNumber = blankAsAbsent(z.coerce.number().int().min(1).max(100_000).default(1));
const pageSize = (fallback: number) => blankAsAbsent(z.coerce.number().int().min(1).max(200).default(fallback));

export const PageQuerySchema = z.object({ page: pageNumber, pageSize: pageSize(50) });

export const MACHINE_STATUSES = ["active", "decommissioned"] as const;
export const MACHINE_SORTS = ["serial", "model", "site", "customer", "health", "lastSeen", "firmware", "status"] as const;
export type MachineSort = (typeof MACHINE_SORTS)[number];

export const MachineListQuerySchema = z.object({
  customerId: optionalId,
  siteId: optionalId,
  modelId: optionalId,
  health: blankAsAbsent(z.enum(HEALTH_BANDS as [HealthBand, ...HealthBand[]]).optional()),
  status: blankAsAbsent(z.enum(MACHINE_STATUSES).optional()),
  q: z.preprocess((v) => (v === null ? undefined : v), z.string().trim().max(100, "Search at most 100 characters.").optional()),
  sort: blankAsAbsent(z.enum(MACHINE_SORTS).default("serial")),
  dir: blankAsAbsent(z.enum(["asc", "desc"]).default("asc")),
  page: pageNumber,
  pageSize: pageSize(25),
});
export type MachineListQuery = z.infer<typeof MachineListQuerySchema>;

export const SerialSchema = z
  .string()
  .trim()
  .min(1, "Enter the serial.")
  .max(64, "Use at most 64 characters.")
  .regex(/^[A-Za-z0-9][A-Za-z0-9._\-/]*$/, "Use letters, digits, dot, hyphen, underscore or slash.");
export const FirmwareSchema = z.string().trim().min(1).max(64, "Use at most 64 characters.");

export const RegisterMachineSchema = z.object({
  serial: SerialSchema,
  modelId: z.uuid("Choose a machine model."),
  siteId: z.uuid("Choose a site."),
  firmware: blankAsAbsent(FirmwareSchema.optional()),
});
export type RegisterMachineInput = z.infer<typeof RegisterMachineSchema>;

export const TIME_ZONES = typeof Intl.supportedValuesOf === "function" ? Intl.supportedValuesOf("timeZone") : ["UTC"];

export const CustomerInputSchema = z.object({ name: z.string().trim().min(2, "Use at least 2 characters.").max(120) });
export const SiteInputSchema = z.object({
  customerId: z.uuid("Choose a customer."),
  name: z.string().trim().min(2, "Use at least 2 characters.").max(120),
  timeZone: z.string().refine((tz) => tz === "UTC" || TIME_ZONES.includes(tz), "Choose an IANA time zone, e.g. Europe/Oslo."),
});
