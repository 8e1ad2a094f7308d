import { handleCompute } from "~/.server/compute/handle-compute";
import { methodNotAllowed } from "~/.server/http/json";
import { answerStepInfo } from "~/lib/compute/run";
import { StepInfoRequestSchema } from "~/lib/compute/schemas";
import type { Route } from "./+types/step-info";

export function loader() {
  return methodNotAllowed("POST");
}

export async function action({ request }: Route.ActionArgs) {
  return handleCompute(request, StepInfoRequestSchema, answerStepInfo);
}
