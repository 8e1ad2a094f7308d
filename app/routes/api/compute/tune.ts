import { handleCompute } from "~/.server/compute/handle-compute";
import { methodNotAllowed } from "~/.server/http/json";
import { answerTune } from "~/lib/compute/run";
import { TuneRequestSchema } from "~/lib/compute/schemas";
import type { Route } from "./+types/tune";

export function loader() {
  return methodNotAllowed("POST");
}

export async function action({ request }: Route.ActionArgs) {
  return handleCompute(request, TuneRequestSchema, answerTune);
}
