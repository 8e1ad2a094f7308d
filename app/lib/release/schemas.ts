// Release API input schemas (shared with the browser for form hints).
import { z } from "zod";

const ids = z.array(z.uuid("Must be an id.")).max(5000).optional();

export const ReleaseTargetSchema = z
  .object({ all: z.boolean().optional(), machineIds: ids, siteIds: ids, customerIds: ids })
  .refine((t) => t.all === true || (t.machineIds?.length ?? 0) + (t.siteIds?.length ?? 0) + (t.customerIds?.length ?? 0) > 0, "Choose all machines of the model, or some customers, sites or machines.");

export const ReleasePilotSchema = z
  .object({
    machineIds: ids,
    share: z.number().gt(0, "The pilot share must be above 0.").max(1, "The pilot share is at most 1 (all machines).").optional(),
  })
  .refine((p) => (p.machineIds?.length ?? 0) > 0 || p.share !== undefined, "Choose pilot machines or a share of the target.");

export const ReleaseGuardSchema = z.object({
  windowMinutes: z.number().int("Whole minutes.").min(1, "At least 1 minute.").max(10080, "At most 10 080 minutes (7 days)."),
  maxIaeIncrease: z.number().gt(0).max(10).optional(),
  maxRejectShare: z.number().min(0).max(1).optional(),
});

export const CreateReleaseSchema = z.object({
  gainSetId: z.uuid("Must be a gain set id."),
  target: ReleaseTargetSchema,
  pilot: ReleasePilotSchema,
  guard: ReleaseGuardSchema,
  confirmMachineCount: z.number().int().min(0),
});
export type CreateReleaseInput = z.infer<typeof CreateReleaseSchema>;

export const PreviewReleaseSchema = z.object({ gainSetId: z.uuid(), target: ReleaseTargetSchema });

export const ReleaseCommandSchema = z.object({ reason: z.string().trim().max(500).optional() }).default({});

export const ReleaseListQuerySchema = z.object({
  page: z.coerce.number().int().min(1).default(1),
  pageSize: z.coerce.number().int().min(1).max(100).default(25),
  state: z.enum(["pending", "piloting", "held", "widening", "complete", "rolled_back"]).optional(),
});
