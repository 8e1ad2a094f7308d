// better-auth endpoints called from actions with `asResponse: true`: read the JSON and keep
// the Set-Cookie headers so the redirect that follows carries the session.

export type AuthResult = { ok: boolean; status: number; body: Record<string, unknown>; cookies: Headers };

export async function readAuthResponse(response: Response): Promise<AuthResult> {
  const cookies = new Headers();
  for (const cookie of response.headers.getSetCookie()) cookies.append("Set-Cookie", cookie);
  const text = await response.text();
  let body: Record<string, unknown> = {};
  try {
    body = text ? (JSON.parse(text) as Record<string, unknown>) : {};
  } catch {
    body = { message: text };
  }
  return { ok: response.ok, status: response.status, body, cookies };
}

export function authErrorCode(result: AuthResult): string | undefined {
  return typeof result.body.code === "string" ? result.body.code : undefined;
}
