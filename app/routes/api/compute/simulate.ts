import { handleCompute } from "~/.server/compute/handle-compute";
import { methodNotAllowed } from "~/.server/http/json";
import { answerSimulate } from "~/lib/compute/run";
import { SimulateRequestSchema } from "~/lib/compute/schemas";
import type { Route } from "./+types/simulate";

export function loader() {
  return methodNotAllowed("POST");
}

export async function action({ request }: Route.ActionArgs) {
  return handleCompute(request, SimulateRequestSchema, answerSimulate);
}
