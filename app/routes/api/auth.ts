// better-auth's own HTTP endpoints, on an allow-list. The app's pages call better-auth in
// process (sign-up, organisations, invitations, members all go through our own pages and
// their capability checks), so over HTTP only these remain:
// - POST /api/auth/sign-in/email — a JSON sign-in, under the same attempt limits as the page;
// - GET  /api/auth/verify-email — the link in the confirmation e-mail;
// - GET  /api/auth/reset-password/:token — the link in the reset e-mail (it redirects to our page);
// - GET  /api/auth/get-session, POST /api/auth/sign-out — the signed-in user's own session.
// Every other path, the organisation plugin's above all (it would list members to any member
// and let an admin rename the slug that devices and signed configurations carry), is 404.
import { admitSignIn, recordSignInSuccess } from "~/.server/auth/attempt-limits";
import { getAuth } from "~/.server/auth/auth";
import { apiError } from "~/.server/http/json";
import { readLimitedText } from "~/.server/http/body";
import type { Route } from "./+types/auth";

const ALLOWED: { method: string; path: RegExp }[] = [
  { method: "POST", path: /^\/sign-in\/email$/ },
  { method: "GET", path: /^\/verify-email$/ },
  { method: "GET", path: /^\/reset-password\/[A-Za-z0-9_-]{1,256}$/ },
  { method: "GET", path: /^\/get-session$/ },
  { method: "POST", path: /^\/sign-out$/ },
];

function allowed(request: Request): string | null {
  const path = new URL(request.url).pathname.replace(/^\/api\/auth/, "");
  return ALLOWED.some((a) => a.method === request.method && a.path.test(path)) ? path : null;
}

const notFound = () => apiError(404, "not_found", "No such endpoint.");

export async function loader({ request }: Route.LoaderArgs) {
  if (!allowed(request)) return notFound();
  return getAuth().handler(request);
}

export async function action({ request }: Route.ActionArgs) {
  const path = allowed(request);
  if (!path) return notFound();
  if (path !== "/sign-in/email") return getAuth().handler(request);

  // Read the body once (small), so the account it names can be limited before the password is tried.
  const text = await readLimitedText(request, 8 * 1024);
  if (text === null) return apiError(413, "payload_too_large", "The body is too large.");
  let email = "";
  try {
    const value = JSON.parse(text) as { email?: unknown };
    if (typeof value?.email === "string") email = value.email;
  } catch {
    return apiError(400, "invalid_json", "The body is not valid JSON.");
  }
  const wait = await admitSignIn(request, email);
  if (wait) return apiError(429, "too_many_attempts", "Too many sign-in attempts; try again later.", undefined, { "retry-after": String(wait.retryAfterS) });
  const response = await getAuth().handler(new Request(request.url, { method: "POST", headers: request.headers, body: text }));
  if (response.ok) await recordSignInSuccess(request, email);
  return response;
}
