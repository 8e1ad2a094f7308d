// The digest's measured fields in one table. A digest is one window of a loop's performance,
// computed on the device: besides its identity (loop, seq, windowStart, windowEnd) it carries
// the fields below. Everything that lists them is derived from this table: the device API's
// zod schema and OpenAPI document (app/.server/device-api/schemas.ts), the ingest statement's
// columns (app/.server/device-api/ingest.ts), the digest table (app/.server/db/schema/digests.ts),
// the management API's rows and time buckets (app/.server/fleet/digests.ts), and the example
// digest that tests, the simulator and the bench send (exampleDigestFields).
//
// Adding a field: one entry here, `npm run db:generate` for the column, and the device's
// computation (createDigestAccumulator in ./digest.ts) to fill it.

/**
 * How values are checked and stored: `count` a whole number ≥ 0 (int4), `number` any finite
 * number, `magnitude` a finite number ≥ 0, `fraction` a share 0..1 (all float8).
 */
export type DigestFieldKind = "count" | "number" | "magnitude" | "fraction";

/** How windows combine into a longer bucket: weighted by their samples where it is a mean. */
export type DigestFieldMerge = "sum" | "max" | "mean" | "rms";

export type DigestField = {
  /** The JSON name in the device API and the management API. */
  name: string;
  /** The SQL column. */
  column: string;
  kind: DigestFieldKind;
  /** Bounds beyond the kind's own, where there are any. */
  min?: number;
  max?: number;
  unit: string;
  merge: DigestFieldMerge;
  description: string;
  /** A plausible value for a heater zone's minute window (examples and tests). */
  example: number;
};

export const INT32_MAX = 2_147_483_647;

export const DIGEST_FIELDS = [
  { name: "samples", column: "samples", kind: "count", min: 1, max: 10_000_000, unit: "samples", merge: "sum", description: "Samples in the window.", example: 60 },
  { name: "gainVersion", column: "gain_version", kind: "count", unit: "version", merge: "max", description: "Version of the gains the loop ran with.", example: 1 },
  { name: "spMean", column: "sp_mean", kind: "number", unit: "process unit", merge: "mean", description: "Mean set point.", example: 220 },
  { name: "pvMean", column: "pv_mean", kind: "number", unit: "process unit", merge: "mean", description: "Mean process value.", example: 219.8 },
  { name: "errMean", column: "err_mean", kind: "number", unit: "process unit", merge: "mean", description: "Mean control error (set point − process value).", example: 0.2 },
  { name: "errRms", column: "err_rms", kind: "magnitude", unit: "process unit", merge: "rms", description: "Root mean square of the control error.", example: 0.6 },
  { name: "errMaxAbs", column: "err_max_abs", kind: "magnitude", unit: "process unit", merge: "max", description: "Largest absolute control error.", example: 1.9 },
  { name: "iae", column: "iae", kind: "magnitude", unit: "process unit·s", merge: "sum", description: "Integral of the absolute error over the window.", example: 12 },
  { name: "ise", column: "ise", kind: "magnitude", unit: "process unit²·s", merge: "sum", description: "Integral of the squared error over the window.", example: 21.6 },
  { name: "uMean", column: "u_mean", kind: "number", unit: "output unit", merge: "mean", description: "Mean controller output.", example: 160 },
  { name: "uStd", column: "u_std", kind: "magnitude", unit: "output unit", merge: "rms", description: "Standard deviation of the controller output.", example: 4 },
  { name: "satHighFrac", column: "sat_high_frac", kind: "fraction", unit: "share", merge: "mean", description: "Share of samples with the output at its upper limit.", example: 0 },
  { name: "satLowFrac", column: "sat_low_frac", kind: "fraction", unit: "share", merge: "mean", description: "Share of samples with the output at its lower limit.", example: 0 },
  { name: "intClampFrac", column: "int_clamp_frac", kind: "fraction", unit: "share", merge: "mean", description: "Share of samples with the integrator held at a limit.", example: 0 },
  { name: "oscCount", column: "osc_count", kind: "count", unit: "detections", merge: "sum", description: "Load-disturbance detections (Hägglund's IAE between zero crossings).", example: 0 },
  { name: "spChanges", column: "sp_changes", kind: "count", unit: "changes", merge: "sum", description: "Set-point changes in the window.", example: 0 },
] as const satisfies readonly DigestField[];

export type DigestFieldName = (typeof DIGEST_FIELDS)[number]["name"];

/** The SQL type of a field's column. */
export function digestSqlType(field: DigestField): "int4" | "float8" {
  return field.kind === "count" ? "int4" : "float8";
}

/** The measured fields of an example digest (DIGEST_FIELDS' examples), for tests, the simulator and the bench. */
export function exampleDigestFields(seconds = 60): Record<DigestFieldName, number> {
  const fields = Object.fromEntries(DIGEST_FIELDS.map((f) => [f.name, f.example])) as Record<DigestFieldName, number>;
  return { ...fields, samples: seconds };
}
