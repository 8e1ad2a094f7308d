// Reading request bodies with a size limit. A body over the limit is read a little further
// and thrown away (DRAIN_ALLOWANCE) before the caller answers 413: closing the connection while
// the client is still sending makes it see a broken pipe instead of our answer. Past that, the
// read stops and the connection is cut; nothing past the limit is ever kept in memory.

/** How much past a limit is read and dropped before the read stops (shared with lean-path.ts). */
export const DRAIN_ALLOWANCE = 1024 * 1024;

/**
 * scripts/serve.js's lean path puts a reader of the body on the Request under this symbol (a
 * function that reads the bytes into memory up to the route's limit, or answers null when the
 * body is larger), and writes the text of a jsonResponse found under it on the Response:
 * neither then goes through a body stream. Symbol.for, because serve.js is plain JS.
 */
export const RAW_BODY = Symbol.for("flyball.rawBody");

type LeanBodyReader = () => Promise<Uint8Array | null>;

/** The body's bytes, or null when it is larger than `limit`. */
export async function readLimitedBytes(request: Request, limit: number): Promise<Uint8Array | null> {
  const lean = (request as Request & { [RAW_BODY]?: LeanBodyReader })[RAW_BODY];
  if (lean && !request.bodyUsed) {
    const bytes = await lean();
    return bytes === null || bytes.byteLength > limit ? null : bytes;
  }
  const declared = Number(request.headers.get("content-length"));
  if (Number.isFinite(declared) && declared > limit + DRAIN_ALLOWANCE) {
    await request.body?.cancel().catch(() => {});
    return null;
  }
  if (!request.body) return new Uint8Array();
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let size = 0;
  try {
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      size += value.byteLength;
      if (size > limit + DRAIN_ALLOWANCE) {
        await reader.cancel().catch(() => {});
        return null;
      }
      if (size <= limit) chunks.push(value);
    }
  } catch {
    // The stream failed (the client went away, or the server's ceiling was passed).
    return null;
  }
  return size > limit ? null : Buffer.concat(chunks);
}

export async function readLimitedText(request: Request, limit: number): Promise<string | null> {
  const bytes = await readLimitedBytes(request, limit);
  return bytes === null ? null : new TextDecoder().decode(bytes);
}
