// JSON {samples, method}, or a CSV upload: multipart with a `file` field (and optional
// `method`), or a text/csv body with ?method=. CSV files are limited to 5 MB.
import { answerWith, handleCompute, requireComputeCaller } from "~/.server/compute/handle-compute";
import { methodNotAllowed } from "~/.server/http/json";
import { readLimitedText } from "~/.server/http/body";
import { apiError } from "~/.server/http/json";
import { answerIdentify } from "~/lib/compute/run";
import { IdentifyRequestSchema } from "~/lib/compute/schemas";
import { MAX_CSV_BYTES, parseStepTestCsv } from "~/lib/compute/step-test-csv";
import type { Route } from "./+types/identify";

export function loader() {
  return methodNotAllowed("POST");
}

const tooLarge = () => apiError(413, "payload_too_large", `The CSV file is larger than ${MAX_CSV_BYTES / 1024 / 1024} MB.`);

function answerCsv(text: string, method: string | null) {
  const csv = parseStepTestCsv(text);
  if (!csv.ok) return apiError(400, "invalid_csv", csv.message);
  return answerWith(IdentifyRequestSchema, { samples: csv.samples, method: method ?? "least-squares" }, answerIdentify);
}

export async function action({ request }: Route.ActionArgs) {
  const type = request.headers.get("content-type") ?? "";
  if (!type.startsWith("multipart/form-data") && !type.startsWith("text/csv")) {
    return handleCompute(request, IdentifyRequestSchema, answerIdentify);
  }
  const refused = await requireComputeCaller(request);
  if (refused) return refused;
  // Multipart framing adds a little; the file itself is checked below.
  if (Number(request.headers.get("content-length") ?? "0") > MAX_CSV_BYTES + 64 * 1024) return tooLarge();
  if (type.startsWith("text/csv")) {
    const text = await readLimitedText(request, MAX_CSV_BYTES);
    if (text === null) return tooLarge();
    return answerCsv(text, new URL(request.url).searchParams.get("method"));
  }
  let form: FormData;
  try {
    form = await request.formData();
  } catch {
    return apiError(400, "invalid_multipart", "The upload could not be read as multipart form data.");
  }
  const file = form.get("file");
  if (!(file instanceof File)) return apiError(400, "invalid_request", "file: attach the step test as a CSV file in the field `file`.");
  if (file.size > MAX_CSV_BYTES) return tooLarge();
  const method = form.get("method");
  return answerCsv(await file.text(), typeof method === "string" ? method : null);
}
