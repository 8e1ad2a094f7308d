// Gain-set and audit-log request schemas (shared with the browser's forms). Pure.
import { z } from "zod";
import { blankAsAbsent, optionalId } from "~/lib/fleet/schemas";
import { ANTI_WINDUP_MODES, GAIN_SET_STATES } from "./types";

const finite = z.number("Must be a number.").refine(Number.isFinite, "Must be a finite number.");
const optionalFinite = finite.nullable().optional();

export const NOTE_MAX = 2000;
export const COMMENT_MAX = 2000;

const parallelGains = z.strictObject({ kp: finite, ki: finite, kd: finite });
const standardGains = z.strictObject({ kc: finite, ti: finite.nullable(), td: finite });

/** POST /api/v1/o/:slug/gain-sets */
export const CreateGainSetSchema = z
  .strictObject({
    loopTemplateId: z.uuid("Choose a loop template."),
    form: z.enum(["parallel", "standard"], "Use parallel or standard."),
    gains: z.union([parallelGains, standardGains]),
    filterN: optionalFinite,
    setpointWeight: optionalFinite,
    antiWindup: z.enum(ANTI_WINDUP_MODES, "Use clamp or back_calculation.").optional(),
    trackingTime: optionalFinite,
    outputMin: optionalFinite,
    outputMax: optionalFinite,
    integratorMin: optionalFinite,
    integratorMax: optionalFinite,
    note: z.string().trim().max(NOTE_MAX, `Use at most ${NOTE_MAX} characters.`),
    /** The version this one revises (a new draft copying it). */
    basedOnId: z.uuid().optional(),
  })
  .superRefine((value, ctx) => {
    const keys = Object.keys(value.gains).sort().join(",");
    if (value.form === "parallel" && keys !== "kd,ki,kp") ctx.addIssue({ code: "custom", path: ["gains"], message: "Parallel form takes {kp, ki, kd}." });
    if (value.form === "standard" && keys !== "kc,td,ti") ctx.addIssue({ code: "custom", path: ["gains"], message: "Standard form takes {kc, ti, td}." });
    if (value.form === "standard" && "ti" in value.gains && value.gains.ti !== null && !(value.gains.ti > 0)) ctx.addIssue({ code: "custom", path: ["gains", "ti"], message: "Ti must be above 0 s (null for no integral action)." });
  });
export type CreateGainSetInput = z.infer<typeof CreateGainSetSchema>;

export const ProposeGainSetSchema = z.strictObject({
  override: z.strictObject({ reason: z.string().trim().min(10, "Write the reason in at least 10 characters.").max(COMMENT_MAX) }).optional(),
});
export const ApproveGainSetSchema = z.strictObject({ comment: z.string().trim().max(COMMENT_MAX).optional() });
export const RejectGainSetSchema = z.strictObject({ comment: z.string().trim().min(1, "Say why it is rejected.").max(COMMENT_MAX) });

const pageNumber = blankAsAbsent(z.coerce.number().int().min(1).max(100_000).default(1));
const pageSize = blankAsAbsent(z.coerce.number().int().min(1).max(200).default(50));

export const GainSetListQuerySchema = z.object({
  loopTemplateId: optionalId,
  state: blankAsAbsent(z.enum(GAIN_SET_STATES).optional()),
  page: pageNumber,
  pageSize,
});
export type GainSetListQuery = z.infer<typeof GainSetListQuerySchema>;

const time = blankAsAbsent(z.coerce.date("Use an ISO 8601 date or time.").optional());

export const AuditQuerySchema = z
  .object({
    from: time,
    to: time,
    actorId: blankAsAbsent(z.string().trim().max(200).optional()),
    action: blankAsAbsent(z.string().trim().max(100).optional()),
    page: pageNumber,
    pageSize,
    format: blankAsAbsent(z.enum(["json", "csv"]).default("json")),
  })
  .refine((q) => !q.from || !q.to || q.from <= q.to, { path: ["to"], message: "Must not be before from." });
export type AuditQuery = z.infer<typeof AuditQuerySchema>;
