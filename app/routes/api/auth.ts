// better-auth's own endpoints (sign-in, verify-email, organisation plugin, ...).
import { getAuth } from "~/.server/auth/auth";
import type { Route } from "./+types/auth";

export async function loader({ request }: Route.LoaderArgs) {
  return getAuth().handler(request);
}

export async function action({ request }: Route.ActionArgs) {
  return getAuth().handler(request);
}
