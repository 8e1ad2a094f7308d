import { handleCompute, methodNotAllowed } from "~/.server/compute/handle-compute";
import { answerTune } from "~/lib/compute/run";
import { TuneRequestSchema } from "~/lib/compute/schemas";
import type { Route } from "./+types/tune";

export function loader() {
  return methodNotAllowed();
}

export async function action({ request }: Route.ActionArgs) {
  return handleCompute(request, TuneRequestSchema, answerTune);
}
