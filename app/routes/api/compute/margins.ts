import { handleCompute, methodNotAllowed } from "~/.server/compute/handle-compute";
import { answerMargins } from "~/lib/compute/run";
import { MarginsRequestSchema } from "~/lib/compute/schemas";
import type { Route } from "./+types/margins";

export function loader() {
  return methodNotAllowed();
}

export async function action({ request }: Route.ActionArgs) {
  return handleCompute(request, MarginsRequestSchema, answerMargins);
}
