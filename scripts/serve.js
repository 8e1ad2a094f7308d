// The production server for the built app (replaces react-router-serve).
//
// Devices call /api/v1/device/* thousands of times a minute with small JSON bodies. Those
// resource routes are served by a lean path: the request goes straight to the route
// module's loader or action (found in the React Router build, so app/routes.ts stays the
// one route table) without the document-request machinery. Everything else — pages, the
// management and compute APIs, better-auth — goes through React Router's request listener,
// and files under build/client are served from disk.
//
//   node scripts/serve.js [build/server/index.js]      PORT, HOST as for react-router-serve
//
// Plain JavaScript on purpose: it runs with node alone (tsx's loader stalls importing the
// server build), and it is small enough to read without types.
import { createReadStream, statSync } from "node:fs";
import http from "node:http";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { createRequestListener } from "@react-router/node";

const buildPath = path.resolve(process.argv[2] ?? `${process.env.FLYBALL_BUILD_DIR ?? "build"}/server/index.js`);
const clientDir = path.resolve(path.dirname(buildPath), "../client");
const port = Number(process.env.PORT ?? 3000);
const host = process.env.HOST ?? "127.0.0.1";
process.env.NODE_ENV ??= "production";

const build = await import(pathToFileURL(buildPath).href);
const renderApp = createRequestListener({ build, mode: process.env.NODE_ENV });

/** Device API paths → their route modules, read from the build's route table. */
function deviceRoutes() {
  const byId = build.routes;
  /** @param {string | undefined} id @returns {string} */
  const fullPath = (id) => {
    const route = id ? byId[id] : undefined;
    if (!route) return "";
    const parent = fullPath(route.parentId);
    return route.path ? `${parent}/${route.path}`.replace(/\/+/g, "/") : parent;
  };
  const table = new Map();
  for (const route of Object.values(byId)) {
    const full = fullPath(route.id);
    if (full.startsWith("/api/v1/device/") && !full.includes(":") && !full.includes("*")) table.set(full, route.module);
  }
  return table;
}
const lean = deviceRoutes();

// Device request bodies are small (the routes allow at most 256 KiB): read them into memory
// here instead of through a web stream. A body over LEAN_BODY_LIMIT is drained (so the client
// sees our answer, not a broken pipe) and answered 413 without reaching the route.
const LEAN_BODY_LIMIT = 1024 * 1024;
const DRAIN_CEILING = 64 * 1024 * 1024;

/** @param {import("node:http").IncomingMessage} req @returns {Promise<Buffer | null>} null when too large */
function readBody(req) {
  return new Promise((resolve, reject) => {
    /** @type {Buffer[]} */
    const chunks = [];
    let size = 0;
    req.on("data", (chunk) => {
      size += chunk.length;
      if (size <= LEAN_BODY_LIMIT) chunks.push(chunk);
      else if (size > DRAIN_CEILING) req.destroy();
    });
    req.on("end", () => resolve(size > LEAN_BODY_LIMIT ? null : Buffer.concat(chunks, size)));
    req.on("error", reject);
    req.on("close", () => {
      if (!req.complete) resolve(null);
    });
  });
}

// The bytes of a lean request's body ride along on the Request under this symbol, and
// readLimitedBytes (app/.server/http/body.ts) takes them from there instead of reading the
// Request's body stream. Responses made by jsonResponse (app/.server/device-auth/http.ts) carry
// their text under it the other way, so it is written without reading the Response's stream.
const RAW_BODY = Symbol.for("flyball.rawBody");

/** @param {import("node:http").IncomingMessage} req @param {URL} url @param {Buffer | undefined} body */
function toRequest(req, url, body) {
  const headers = new Headers();
  for (let i = 0; i < req.rawHeaders.length; i += 2) headers.append(req.rawHeaders[i], req.rawHeaders[i + 1]);
  const request = new Request(url, { method: req.method, headers, body });
  if (body) Object.defineProperty(request, RAW_BODY, { value: body });
  return request;
}

/** @param {import("node:http").ServerResponse} res @param {Response} response */
async function sendResponse(res, response) {
  /** @type {Record<string, string | string[]>} */
  const headers = {};
  response.headers.forEach((value, key) => {
    if (key !== "set-cookie") headers[key] = value;
  });
  const cookies = response.headers.getSetCookie();
  if (cookies.length) headers["set-cookie"] = cookies;
  const raw = /** @type {any} */ (response)[RAW_BODY];
  const body = typeof raw === "string" ? Buffer.from(raw) : response.body ? Buffer.from(await response.arrayBuffer()) : undefined;
  if (body) headers["content-length"] = String(body.length);
  res.writeHead(response.status, headers);
  res.end(body);
}

/** @param {any} module @param {import("node:http").IncomingMessage} req @param {import("node:http").ServerResponse} res @param {URL} url */
async function serveLean(module, req, res, url) {
  let body;
  if (req.method !== "GET" && req.method !== "HEAD") {
    const declared = Number(req.headers["content-length"]);
    body = declared > DRAIN_CEILING ? null : await readBody(req);
    if (body === null) {
      const tooLarge = JSON.stringify({ error: { code: "payload_too_large", message: `The body is larger than ${LEAN_BODY_LIMIT} bytes.` } });
      res.writeHead(413, { "content-type": "application/json; charset=utf-8", "content-length": Buffer.byteLength(tooLarge), connection: "close" });
      res.end(tooLarge);
      return;
    }
  }
  const request = toRequest(req, url, body);
  const handler = req.method === "GET" || req.method === "HEAD" ? module.loader : module.action;
  let result;
  try {
    result = handler ? await handler({ request, params: {}, context: {} }) : Response.json({ error: { code: "method_not_allowed", message: "Method not allowed." } }, { status: 405 });
  } catch (thrown) {
    result = thrown;
  }
  if (result instanceof Response) return sendResponse(res, result);
  console.error("device route failed", result);
  return sendResponse(res, Response.json({ error: { code: "internal_error", message: "Something went wrong on our side." } }, { status: 500 }));
}

/** @type {Record<string, string>} */
const MIME = {
  ".js": "text/javascript; charset=utf-8",
  ".css": "text/css; charset=utf-8",
  ".svg": "image/svg+xml",
  ".png": "image/png",
  ".ico": "image/x-icon",
  ".woff2": "font/woff2",
  ".woff": "font/woff",
  ".json": "application/json",
  ".txt": "text/plain; charset=utf-8",
  ".map": "application/json",
};

/** A file under build/client, or false. Hashed /assets/ files are cached for a year. */
function serveStatic(req, res, url) {
  if (req.method !== "GET" && req.method !== "HEAD") return false;
  let pathname;
  try {
    pathname = decodeURIComponent(url.pathname);
  } catch {
    return false;
  }
  if (pathname.endsWith("/") || pathname.includes("\0")) return false;
  const file = path.join(clientDir, pathname);
  if (!file.startsWith(clientDir + path.sep)) return false;
  let size;
  try {
    const stat = statSync(file);
    if (!stat.isFile()) return false;
    size = stat.size;
  } catch {
    return false;
  }
  const immutable = pathname.startsWith("/assets/");
  res.writeHead(200, {
    "content-type": MIME[path.extname(file)] ?? "application/octet-stream",
    "content-length": size,
    "cache-control": immutable ? "public, max-age=31536000, immutable" : "public, max-age=3600",
  });
  if (req.method === "HEAD") res.end();
  else createReadStream(file).pipe(res);
  return true;
}

const server = http.createServer((req, res) => {
  const url = new URL(req.url ?? "/", `http://${req.headers.host ?? `${host}:${port}`}`);
  const module = lean.get(url.pathname);
  if (module) {
    serveLean(module, req, res, url).catch((error) => {
      console.error(error);
      if (!res.headersSent) res.writeHead(500).end();
    });
    return;
  }
  if (serveStatic(req, res, url)) return;
  void renderApp(req, res);
});
server.keepAliveTimeout = 65_000;
server.listen(port, host, () => console.log(`Flyball app at http://${host}:${port}/ (device API on the lean path: ${[...lean.keys()].join(", ")})`));

for (const signal of ["SIGINT", "SIGTERM"]) {
  process.on(signal, () => {
    server.close(() => process.exit(0));
    server.closeAllConnections();
    setTimeout(() => process.exit(0), 3000).unref();
  });
}
