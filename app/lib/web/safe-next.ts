// Where to go after signing in: only somewhere on this app. `next` is resolved as a browser
// would resolve it against our own origin (tabs and newlines dropped, backslashes read as
// slashes, percent escapes kept), and anything that lands on another origin, or whose path
// would read as a protocol-relative address ("//host"), falls back.
const OWN = "http://flyball.invalid";

export function safeNext(next: string | null | undefined, fallback = "/"): string {
  if (!next || next.length > 2048 || !next.startsWith("/")) return fallback;
  let url: URL;
  try {
    url = new URL(next, OWN);
  } catch {
    return fallback;
  }
  if (url.origin !== OWN) return fallback;
  const path = `${url.pathname}${url.search}${url.hash}`;
  return path.startsWith("//") || path.startsWith("/\\") ? fallback : path;
}
