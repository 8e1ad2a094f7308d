// The compute API's request contract (POST /api/v1/compute/...), shared by the server
// routes and the tuning bench page. Numbers are SI with times in seconds. Every object is
// strict: an unknown field is refused, and so is NaN, ±Infinity or a negative time.
import { z } from "zod";
import { checkGainSigns } from "~/lib/control";

export const MAX_SAMPLES = 200_000;

const finite = () => z.number({ error: "must be a finite number" }).refine(Number.isFinite, "must be a finite number");
const positive = () => finite().refine((v) => v > 0, "must be greater than 0");
const nonNegative = () => finite().refine((v) => v >= 0, "must not be negative");
const nonZero = () => finite().refine((v) => v !== 0, "must not be 0");

/** Degree of a coefficient list written highest power first, ignoring leading zeros. */
function degree(coefficients: number[]): number {
  const first = coefficients.findIndex((c) => c !== 0);
  return first < 0 ? -1 : coefficients.length - 1 - first;
}

const coefficients = (label: string) =>
  z.array(finite(), { error: `${label} must be an array of numbers` }).min(1, `${label} must not be empty`).max(21, `${label} has more than 21 coefficients`);

export const PlantSchema = z.discriminatedUnion("type", [
  z.strictObject({ type: z.literal("fopdt"), gain: nonZero(), timeConstant: positive(), deadTime: nonNegative() }),
  z.strictObject({
    type: z.literal("sopdt"),
    gain: nonZero(),
    timeConstants: z.tuple([positive(), positive()], { error: "must be two time constants [t1, t2]" }),
    deadTime: nonNegative(),
  }),
  z.strictObject({ type: z.literal("ipdt"), gain: nonZero(), deadTime: nonNegative() }),
  z
    .strictObject({
      type: z.literal("tf"),
      numerator: coefficients("numerator"),
      denominator: coefficients("denominator"),
      deadTime: nonNegative().optional(),
    })
    .superRefine((tf, ctx) => {
      const dn = degree(tf.denominator);
      const nn = degree(tf.numerator);
      if (dn < 0) ctx.addIssue({ code: "custom", path: ["denominator"], message: "must have a non-zero coefficient" });
      else if (dn < 1 && nn <= 0) ctx.addIssue({ code: "custom", path: ["denominator"], message: "must be of degree 1 or more (a pure gain is not a plant)" });
      if (nn < 0) ctx.addIssue({ code: "custom", path: ["numerator"], message: "must have a non-zero coefficient" });
      if (dn >= 0 && nn > dn) ctx.addIssue({ code: "custom", path: ["denominator"], message: `is of degree ${dn}, lower than the numerator's ${nn}` });
    }),
], { error: "type must be fopdt, sopdt, ipdt or tf" });
export type PlantInput = z.infer<typeof PlantSchema>;

const controllerOptions = {
  filterN: positive().refine((n) => n <= 1000, "must be at most 1000").optional(),
  outputLimits: z
    .tuple([finite(), finite()], { error: "must be [min, max]" })
    .refine(([min, max]) => min < max, "min must be below max")
    .optional(),
  antiWindup: z.enum(["none", "clamp", "back-calculation"]).optional(),
  trackingTime: positive().optional(),
  setpointWeight: finite().refine((b) => b >= 0 && b <= 1, "must be between 0 and 1").optional(),
};

export const ControllerSchema = z.discriminatedUnion("form", [
  z
    .strictObject({ form: z.literal("parallel"), kp: finite(), ki: finite(), kd: finite(), ...controllerOptions })
    .superRefine((gains, ctx) => {
      // One sign convention in every form: reverse acting means all gains negative.
      const wrong = checkGainSigns(gains);
      if (wrong) ctx.addIssue({ code: "custom", path: [wrong.field], message: wrong.message });
    }),
  z.strictObject({ form: z.literal("standard"), kc: finite(), ti: positive().nullable(), td: nonNegative(), ...controllerOptions }),
  z.strictObject({ form: z.literal("series"), kc: finite(), ti: positive().nullable(), td: nonNegative(), ...controllerOptions }),
], { error: "form must be parallel, standard or series" });
export type ControllerInput = z.infer<typeof ControllerSchema>;

export const MarginsRequestSchema = z.strictObject({
  plant: PlantSchema,
  controller: ControllerSchema,
  samplePeriod: positive().optional(),
});

export const TUNING_RULE_NAMES = ["ziegler-nichols", "ziegler-nichols-step", "cohen-coon", "simc", "imc", "amigo"] as const;
export const CONTROLLER_KINDS = ["p", "pi", "pid"] as const;

export const TuneRequestSchema = z
  .strictObject({
    model: PlantSchema.optional(),
    ultimate: z.strictObject({ ku: positive(), pu: positive() }).optional(),
    rule: z.enum(TUNING_RULE_NAMES),
    controller: z.enum(CONTROLLER_KINDS),
    closedLoopTimeConstant: positive().optional(),
    samplePeriod: positive().optional(),
  })
  .superRefine((request, ctx) => {
    if (!request.model && !request.ultimate) ctx.addIssue({ code: "custom", path: ["model"], message: "give a model or ultimate {ku, pu}" });
    if (request.model && request.ultimate) ctx.addIssue({ code: "custom", path: ["ultimate"], message: "give either a model or ultimate, not both" });
    if (request.ultimate && request.rule !== "ziegler-nichols") {
      ctx.addIssue({ code: "custom", path: ["rule"], message: `${request.rule} needs a model; only ziegler-nichols works from ultimate {ku, pu}` });
    }
  });

const series = (label: string) =>
  z.array(finite(), { error: `${label} must be an array of numbers` }).min(1, `${label} must not be empty`).max(MAX_SAMPLES, `${label} has more than ${MAX_SAMPLES} samples`);

export const StepSamplesSchema = z
  .strictObject({ t: series("t"), u: series("u"), y: series("y") })
  .superRefine((s, ctx) => {
    if (s.u.length !== s.t.length) ctx.addIssue({ code: "custom", path: ["u"], message: `has ${s.u.length} values but t has ${s.t.length}` });
    if (s.y.length !== s.t.length) ctx.addIssue({ code: "custom", path: ["y"], message: `has ${s.y.length} values but t has ${s.t.length}` });
  });

export const IDENTIFY_METHODS = ["smith", "sundaresan-krishnaswamy", "least-squares"] as const;

export const IdentifyRequestSchema = z.strictObject({ samples: StepSamplesSchema, method: z.enum(IDENTIFY_METHODS) });

const valueStep = z.strictObject({ time: nonNegative(), value: finite() });

export const SimulateRequestSchema = z
  .strictObject({
    plant: PlantSchema,
    controller: ControllerSchema,
    samplePeriod: positive(),
    duration: positive(),
    /** A number is a step of that size at t = 0; a list gives steps at their times. */
    setpoint: z.union([finite(), z.array(valueStep).max(100)]).optional(),
    /** A load-disturbance step at the plant input. */
    loadStep: z.union([valueStep, z.array(valueStep).max(100)]).optional(),
    noise: z.strictObject({ standardDeviation: nonNegative(), seed: z.number().int().optional() }).optional(),
  })
  .superRefine((request, ctx) => {
    const samples = Math.floor(request.duration / request.samplePeriod) + 1;
    if (samples > MAX_SAMPLES) {
      ctx.addIssue({ code: "custom", path: ["duration"], message: `gives ${samples} samples at this sample period; at most ${MAX_SAMPLES}` });
    }
  });

export const StepInfoRequestSchema = z.strictObject({
  plant: PlantSchema,
  duration: positive().optional(),
});

export type MarginsRequest = z.infer<typeof MarginsRequestSchema>;
export type TuneRequest = z.infer<typeof TuneRequestSchema>;
export type IdentifyRequest = z.infer<typeof IdentifyRequestSchema>;
export type SimulateRequest = z.infer<typeof SimulateRequestSchema>;
export type StepInfoRequest = z.infer<typeof StepInfoRequestSchema>;
