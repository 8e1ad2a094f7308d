import { handleCompute } from "~/.server/compute/handle-compute";
import { methodNotAllowed } from "~/.server/http/json";
import { answerMargins } from "~/lib/compute/run";
import { MarginsRequestSchema } from "~/lib/compute/schemas";
import type { Route } from "./+types/margins";

export function loader() {
  return methodNotAllowed("POST");
}

export async function action({ request }: Route.ActionArgs) {
  return handleCompute(request, MarginsRequestSchema, answerMargins);
}
