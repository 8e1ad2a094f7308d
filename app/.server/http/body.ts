// Reading request bodies with a size limit. A body over the limit is read to its end and
// thrown away (up to a ceiling) before the caller answers 413: closing the connection while
// the client is still sending makes it see a broken pipe instead of our answer.

const DRAIN_CEILING = 64 * 1024 * 1024;

/**
 * scripts/serve.js's lean path puts the body bytes it already read on the Request under this
 * symbol, and writes the text of a jsonResponse (device-auth/http.ts) found under it on the
 * Response: neither then goes through a body stream. Symbol.for, because serve.js is plain JS.
 */
export const RAW_BODY = Symbol.for("flyball.rawBody");

/** The body's bytes, or null when it is larger than `limit`. */
export async function readLimitedBytes(request: Request, limit: number): Promise<Uint8Array | null> {
  const raw = (request as Request & { [RAW_BODY]?: Uint8Array })[RAW_BODY];
  if (raw && !request.bodyUsed) return raw.byteLength > limit ? null : raw;
  const declared = Number(request.headers.get("content-length"));
  if (Number.isFinite(declared) && declared > DRAIN_CEILING) return null;
  if (!request.body) return new Uint8Array();
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let size = 0;
  let over = Number.isFinite(declared) && declared > limit;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    size += value.byteLength;
    if (size > limit) over = true;
    if (size > DRAIN_CEILING) {
      await reader.cancel().catch(() => {});
      return null;
    }
    if (!over) chunks.push(value);
  }
  return over ? null : Buffer.concat(chunks);
}

export async function readLimitedText(request: Request, limit: number): Promise<string | null> {
  const bytes = await readLimitedBytes(request, limit);
  return bytes === null ? null : new TextDecoder().decode(bytes);
}
