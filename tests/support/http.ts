// Talking to the running app (started by scripts/test.sh) the way a browser or device does.
export const APP_URL = process.env.APP_URL ?? "http://127.0.0.1:3100";
export const INBOX_URL = process.env.RESEND_BASE_URL ?? "http://127.0.0.1:3035";

export type Session = { cookie: string };

/** Sign in through better-auth's endpoint and keep the session cookie. */
export async function signIn(email: string, password = "flyball-demo"): Promise<Session> {
  const response = await fetch(`${APP_URL}/api/auth/sign-in/email`, {
    method: "POST",
    headers: { "content-type": "application/json", origin: APP_URL },
    body: JSON.stringify({ email, password }),
  });
  if (!response.ok) throw new Error(`sign-in of ${email} failed: ${response.status} ${await response.text()}`);
  const cookie = response.headers
    .getSetCookie()
    .map((c) => c.split(";")[0])
    .join("; ");
  return { cookie };
}

/** GET a page or resource; redirects are not followed so tests can see them. */
export function get(path: string, session?: Session, headers: Record<string, string> = {}) {
  return fetch(`${APP_URL}${path}`, { redirect: "manual", headers: { ...(session ? { cookie: session.cookie } : {}), ...headers } });
}

/** POST a form the way a browser would (same origin). */
export function postForm(path: string, fields: Record<string, string>, session?: Session) {
  return fetch(`${APP_URL}${path}`, {
    method: "POST",
    redirect: "manual",
    headers: {
      "content-type": "application/x-www-form-urlencoded",
      origin: APP_URL,
      ...(session ? { cookie: session.cookie } : {}),
    },
    body: new URLSearchParams(fields).toString(),
  });
}

export function postJson(path: string, body: unknown, session?: Session, headers: Record<string, string> = {}) {
  return fetch(`${APP_URL}${path}`, {
    method: "POST",
    redirect: "manual",
    headers: { "content-type": "application/json", origin: APP_URL, ...(session ? { cookie: session.cookie } : {}), ...headers },
    body: typeof body === "string" ? body : JSON.stringify(body),
  });
}

type InboxMessage = { id: string; to: string[]; subject: string; text: string | null; html: string | null };

export async function inbox(to: string): Promise<InboxMessage[]> {
  const response = await fetch(`${INBOX_URL}/api/messages?to=${encodeURIComponent(to)}`);
  return ((await response.json()) as { items: InboxMessage[] }).items;
}

export function firstLink(message: InboxMessage): string {
  const match = (message.text ?? "").match(/https?:\/\/\S+/);
  if (!match) throw new Error(`no link in message "${message.subject}"`);
  return match[0];
}
