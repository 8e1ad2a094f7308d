import { redirect } from "react-router";
import { getAuth } from "~/.server/auth/auth";
import { readAuthResponse } from "~/.server/auth/call-auth";
import type { Route } from "./+types/sign-out";

export async function loader() {
  return redirect("/");
}

export async function action({ request }: Route.ActionArgs) {
  const result = await readAuthResponse(await getAuth().api.signOut({ headers: request.headers, asResponse: true }));
  return redirect("/", { headers: result.cookies });
}
