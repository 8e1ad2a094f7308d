// The production server for the built app (replaces react-router-serve).
//
// Every request is turned into a web Request here, from the configured origin and the request's
// path only (never from its Host header), with the client's address in one header of ours and a
// body that cannot grow past a ceiling. Then:
// - /api/v1/device/* goes to the lean path (app/.server/http/lean-path.ts, reached through the
//   build): straight to the route module, its body read only when the route asks for it and
//   never past the route's own limit;
// - files under build/client are served from disk (serve-static);
// - everything else goes to React Router's request handler.
// A bad request line, header or URL gets 400; an error inside one request answers 500 for that
// request and never ends the process. Security headers go on every answer.
//
//   node scripts/serve.js [build/server/index.js]      PORT, HOST as for react-router-serve
//
// Plain JavaScript on purpose: it runs with node alone (tsx's loader stalls importing the
// server build).
import http from "node:http";
import { isIP } from "node:net";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { createRequestHandler } from "react-router";
import serveStatic from "serve-static";

const buildPath = path.resolve(process.argv[2] ?? `${process.env.FLYBALL_BUILD_DIR ?? "build"}/server/index.js`);
const clientDir = path.resolve(path.dirname(buildPath), "../client");
const port = Number(process.env.PORT ?? 3000);
const host = process.env.HOST ?? "127.0.0.1";
process.env.NODE_ENV ??= "production";
/** Requests are built on this origin; the Host header a client sends is never used. */
const ORIGIN = new URL(process.env.BETTER_AUTH_URL ?? `http://${host}:${port}`).origin;
const OVER_TLS = ORIGIN.startsWith("https:");

/** The header that carries the client's address to the app (see clientAddress). */
const CLIENT_ADDRESS_HEADER = "x-flyball-client-address";
/** Proxies whose X-Forwarded-For is believed (TRUSTED_PROXIES, comma separated addresses). */
const TRUSTED_PROXIES = new Set(
  (process.env.TRUSTED_PROXIES ?? "")
    .split(",")
    .map((a) => a.trim())
    .filter(Boolean),
);

// Bodies: the most any route reads (the compute API's 16 MiB JSON plus room for a form's
// framing); past it the request's stream fails and the connection is closed. The device
// routes have tighter limits of their own (app/.server/device-api/limits.ts).
const BODY_CEILING = 17 * 1024 * 1024;

const build = await import(pathToFileURL(buildPath).href);
const handleRequest = createRequestHandler(build, process.env.NODE_ENV);
/** @type {import("../app/.server/http/lean-path").LeanPath} */
const lean = build.entry.module.createLeanPath(build.routes);

class BadRequest extends Error {}

/** host[:port] as RFC 9110 allows it (a name, an IPv4 address or a bracketed IPv6 one). */
const VALID_HOST = /^(?:[A-Za-z0-9](?:[A-Za-z0-9.-]{0,252})|\[[0-9A-Fa-f:.]{2,45}\])(?::\d{1,5})?$/;

/**
 * The request's URL on our own origin. Only origin-form targets ("/path?query") are served;
 * an absolute or malformed target, or one with a NUL, is a bad request.
 * @param {string | undefined} target
 */
function requestUrl(target) {
  if (!target || !target.startsWith("/") || target.startsWith("//") || target.includes("\0")) throw new BadRequest("bad request target");
  let url;
  try {
    url = new URL(target, ORIGIN);
  } catch {
    throw new BadRequest("bad request target");
  }
  if (url.origin !== ORIGIN) throw new BadRequest("bad request target");
  try {
    decodeURIComponent(url.pathname);
  } catch {
    throw new BadRequest("bad percent escape");
  }
  return url;
}

/**
 * The address the request came from: the socket's, or, when the socket is a trusted proxy, the
 * nearest address in X-Forwarded-For that is not itself a trusted proxy.
 * @param {import("node:http").IncomingMessage} req
 */
function clientAddress(req) {
  const socketAddress = (req.socket.remoteAddress ?? "unknown").replace(/^::ffff:/, "");
  if (!TRUSTED_PROXIES.has(socketAddress)) return socketAddress;
  const forwarded = String(req.headers["x-forwarded-for"] ?? "")
    .split(",")
    .map((a) => a.trim().replace(/^::ffff:/, ""))
    .filter((a) => isIP(a));
  for (let i = forwarded.length - 1; i >= 0; i--) if (!TRUSTED_PROXIES.has(forwarded[i])) return forwarded[i];
  return socketAddress;
}

/** @param {import("node:http").IncomingMessage} req */
function requestHeaders(req) {
  const headers = new Headers();
  for (let i = 0; i < req.rawHeaders.length; i += 2) {
    if (req.rawHeaders[i].toLowerCase() === CLIENT_ADDRESS_HEADER) continue;
    try {
      headers.append(req.rawHeaders[i], req.rawHeaders[i + 1]);
    } catch {
      throw new BadRequest("bad header");
    }
  }
  headers.set(CLIENT_ADDRESS_HEADER, clientAddress(req));
  return headers;
}

/**
 * The body as a web stream that follows the reader's pace. Past BODY_CEILING it fails, reading
 * stops, and `state.tooLarge` tells the caller to answer 413 whatever the route made of it.
 * @param {import("node:http").IncomingMessage} req @param {{ tooLarge: boolean }} state
 */
function bodyStream(req, state) {
  let size = 0;
  return new ReadableStream({
    start(controller) {
      req.on("data", (chunk) => {
        size += chunk.length;
        if (size > BODY_CEILING) {
          state.tooLarge = true;
          req.pause();
          req.removeAllListeners("data");
          controller.error(new Error("body too large"));
          return;
        }
        controller.enqueue(new Uint8Array(chunk.buffer, chunk.byteOffset, chunk.byteLength));
        if ((controller.desiredSize ?? 1) <= 0) req.pause();
      });
      req.on("end", () => controller.close());
      req.on("error", (error) => controller.error(error));
    },
    pull() {
      req.resume();
    },
    cancel() {
      req.destroy();
    },
  }, { highWaterMark: 4 });
}

// Responses made with jsonResponse (app/.server/http/json.ts) carry their text under this
// symbol; it is written here without going through the Response's stream.
const RAW_BODY = Symbol.for("flyball.rawBody");

const SECURITY_HEADERS = {
  "x-content-type-options": "nosniff",
  "referrer-policy": "no-referrer",
  "x-frame-options": "DENY",
  ...(OVER_TLS ? { "strict-transport-security": "max-age=31536000; includeSubDomains" } : {}),
};
/** For answers that are not documents (the document's own policy, with its nonce, is set in app/entry.server.tsx). */
const DEFAULT_CSP = "default-src 'none'; frame-ancestors 'none'; base-uri 'none'; form-action 'none'";

/** @param {import("node:http").IncomingMessage} req @param {import("node:http").ServerResponse} res @param {Response} response */
async function sendResponse(req, res, response) {
  /** @type {Record<string, string | string[]>} */
  const headers = { ...SECURITY_HEADERS };
  response.headers.forEach((value, key) => {
    if (key !== "set-cookie") headers[key] = value;
  });
  headers["content-security-policy"] ??= DEFAULT_CSP;
  const cookies = response.headers.getSetCookie();
  if (cookies.length) headers["set-cookie"] = cookies;
  const raw = /** @type {any} */ (response)[RAW_BODY];
  if (typeof raw === "string") {
    const body = Buffer.from(raw);
    headers["content-length"] = String(body.length);
    res.writeHead(response.status, headers);
    res.end(req.method === "HEAD" ? undefined : body);
    return;
  }
  res.writeHead(response.status, headers);
  if (!response.body || req.method === "HEAD") {
    res.end();
    return;
  }
  const reader = response.body.getReader();
  try {
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      if (!res.write(value)) await new Promise((resolve) => res.once("drain", resolve).once("close", resolve));
      if (res.destroyed) break;
    }
  } finally {
    reader.cancel().catch(() => {});
    res.end();
  }
}

/** @param {string} code @param {string} message */
const jsonError = (status, code, message) =>
  new Response(JSON.stringify({ error: { code, message } }), { status, headers: { "content-type": "application/json; charset=utf-8", "cache-control": "no-store" } });

/** 413 for a body past BODY_CEILING; the connection closes, since the rest of the body is never read. */
const tooLarge = () => {
  const response = jsonError(413, "payload_too_large", `The body is larger than ${BODY_CEILING} bytes.`);
  response.headers.set("connection", "close");
  return response;
};

// Files under build/client, through serve-static (GET and HEAD only; anything it does not find
// falls through to the app). Hashed /assets/ files are cached for a year.
const assetsDir = path.join(clientDir, "assets") + path.sep;
const staticFiles = serveStatic(clientDir, {
  index: false,
  redirect: false,
  dotfiles: "ignore",
  maxAge: "1h",
  setHeaders(res, filePath) {
    for (const [name, value] of Object.entries(SECURITY_HEADERS)) res.setHeader(name, value);
    res.setHeader("content-security-policy", DEFAULT_CSP);
    if (filePath.startsWith(assetsDir)) res.setHeader("cache-control", "public, max-age=31536000, immutable");
  },
});

/** Whether the request was answered from build/client. @param {import("node:http").IncomingMessage} req @param {import("node:http").ServerResponse} res */
function serveFile(req, res) {
  return new Promise((resolve) => {
    const answered = () => resolve(true);
    res.once("close", answered);
    staticFiles(req, res, () => {
      res.off("close", answered);
      resolve(false);
    });
  });
}

/** @param {import("node:http").IncomingMessage} req @param {import("node:http").ServerResponse} res */
async function serve(req, res) {
  let url;
  try {
    // The Host header is never used to build anything, but a malformed one is still refused.
    if (!VALID_HOST.test(req.headers.host ?? "")) throw new BadRequest("bad host");
    url = requestUrl(req.url);
  } catch {
    return sendResponse(req, res, jsonError(400, "bad_request", "The request target is not valid."));
  }
  if (!lean.paths.includes(url.pathname) && (req.method === "GET" || req.method === "HEAD") && (await serveFile(req, res))) return;
  let headers;
  try {
    headers = requestHeaders(req);
  } catch (error) {
    if (!(error instanceof BadRequest)) throw error;
    return sendResponse(req, res, jsonError(400, "bad_request", "A request header is not valid."));
  }
  // Device calls are short and run to the end: no abort signal on the lean path (a signal costs
  // undici's Request a set of listeners per request).
  const leanAnswer = lean.serve(req, url, headers);
  if (leanAnswer) return sendResponse(req, res, await leanAnswer);
  const controller = new AbortController();
  // Abort a page's work only when the client went away before the answer was complete.
  res.on("close", () => {
    if (!res.writableFinished) controller.abort();
  });
  const hasBody = req.method !== "GET" && req.method !== "HEAD";
  if (hasBody && Number(req.headers["content-length"]) > BODY_CEILING) return sendResponse(req, res, tooLarge());
  const body = { tooLarge: false };
  const response = await handleRequest(new Request(url, { method: req.method, headers, signal: controller.signal, ...(hasBody ? { body: bodyStream(req, body), duplex: "half" } : {}) }));
  await sendResponse(req, res, body.tooLarge ? tooLarge() : response);
}

const server = http.createServer(
  { headersTimeout: 20_000, requestTimeout: 60_000, maxHeaderSize: 16 * 1024 },
  (req, res) => {
    serve(req, res).catch((error) => {
      console.error("request failed", error);
      if (!res.headersSent) sendResponse(req, res, jsonError(500, "internal_error", "Something went wrong on our side.")).catch(() => res.destroy());
      else res.destroy();
    });
  },
);
server.keepAliveTimeout = 65_000;
server.maxConnections = Number(process.env.MAX_CONNECTIONS ?? 2000);
server.on("clientError", (error, socket) => {
  if (socket.writable && !/** @type {any} */ (error).code?.startsWith("ERR_HTTP_REQUEST_TIMEOUT")) {
    socket.end("HTTP/1.1 400 Bad Request\r\nconnection: close\r\ncontent-length: 0\r\n\r\n");
  } else socket.destroy();
});
server.listen(port, host, () => console.log(`Flyball app at http://${host}:${port}/ (device API on the lean path: ${lean.paths.join(", ")})`));

// A failure that escapes a request (a stream error after the answer began, say) is logged; it
// must not take the other requests down with it.
process.on("uncaughtException", (error) => console.error("uncaught", error));
process.on("unhandledRejection", (error) => console.error("unhandled rejection", error));

for (const signal of ["SIGINT", "SIGTERM"]) {
  process.on(signal, () => {
    server.close(() => process.exit(0));
    server.closeAllConnections();
    setTimeout(() => process.exit(0), 3000).unref();
  });
}
