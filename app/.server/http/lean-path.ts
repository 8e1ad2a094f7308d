// The lean path: how scripts/serve.js serves the device API. Devices call it thousands of times
// a minute with small JSON bodies, and React Router's document machinery costs more than the
// work, so a request for one of these paths goes straight to its route module's loader or
// action (found in the build's route table, so app/routes.ts stays the one list of routes).
//
// The body is not read until the route asks for it (after the device token is checked), and
// then never past the route's limit in DEVICE_BODY_LIMITS: the route finds a reader on the
// Request under RAW_BODY (readLimitedBytes in ./body.ts uses it). A route answers the same
// through this path as through the framework; lean-path.test.ts runs the routes both ways.
import type { IncomingMessage } from "node:http";
import type { ServerBuild } from "react-router";
import { DEVICE_BODY_LIMITS } from "~/.server/device-api/limits";
import { DRAIN_ALLOWANCE, RAW_BODY } from "./body";
import { methodNotAllowed } from "./json";


type RouteModule = { loader?: (args: RouteArgs) => unknown; action?: (args: RouteArgs) => unknown };
type RouteArgs = { request: Request; params: Record<string, string>; context: Record<string, never> };

export type LeanPath = {
  /** The paths it serves. */
  paths: string[];
  /** The answer for a request on one of `paths`, or null when the path is not one of them. */
  serve(req: IncomingMessage, url: URL, headers: Headers): Promise<Response> | null;
};

/**
 * Read at most `limit` bytes of a request's body; null when it is larger (the rest, up to
 * DRAIN_ALLOWANCE, is read and dropped; past that reading stops and the caller closes the
 * connection), or when the client went away.
 */
export function readNodeBody(req: IncomingMessage, limit: number): Promise<Buffer | null> {
  return new Promise((resolve, reject) => {
    const declared = Number(req.headers["content-length"]);
    if (declared > limit + DRAIN_ALLOWANCE) {
      req.pause();
      resolve(null);
      return;
    }
    const chunks: Buffer[] = [];
    let size = 0;
    req.on("data", (chunk: Buffer) => {
      size += chunk.length;
      if (size <= limit) chunks.push(chunk);
      else if (size > limit + DRAIN_ALLOWANCE) {
        req.pause();
        resolve(null);
      }
    });
    req.on("end", () => resolve(size > limit ? null : Buffer.concat(chunks, size)));
    req.on("error", reject);
    req.on("close", () => {
      if (!req.complete) resolve(null);
    });
  });
}

/** A Request whose body is read from `req` only when a route asks for it, at most `limit` bytes. */
export function leanRequest(req: IncomingMessage, url: URL, headers: Headers, limit: number): Request {
  const method = req.method ?? "GET";
  const request = new Request(url, { method, headers });
  if (method !== "GET" && method !== "HEAD") {
    let pending: Promise<Buffer | null> | undefined;
    Object.defineProperty(request, RAW_BODY, { value: () => (pending ??= readNodeBody(req, limit)) });
  }
  return request;
}

/** The device routes of a build, by full path. */
function deviceRoutes(routes: ServerBuild["routes"]): Map<string, RouteModule> {
  const fullPath = (id: string | undefined): string => {
    const route = id ? routes[id] : undefined;
    if (!route) return "";
    const parent = fullPath(route.parentId);
    return route.path ? `${parent}/${route.path}`.replace(/\/+/g, "/") : parent;
  };
  const table = new Map<string, RouteModule>();
  for (const route of Object.values(routes)) {
    if (!route) continue;
    const full = fullPath(route.id);
    if (full in DEVICE_BODY_LIMITS) table.set(full, route.module as RouteModule);
  }
  return table;
}

/** Call a route module the way React Router would for a resource route; a thrown Response is the answer. */
export async function runRouteModule(module: RouteModule, request: Request): Promise<Response> {
  const handler = request.method === "GET" || request.method === "HEAD" ? module.loader : module.action;
  if (!handler) return methodNotAllowed(module.loader ? "GET" : "POST");
  let result: unknown;
  try {
    result = await handler({ request, params: {}, context: {} });
  } catch (thrown) {
    if (thrown instanceof Response) return thrown;
    throw thrown;
  }
  if (!(result instanceof Response)) throw new Error(`the route for ${new URL(request.url).pathname} did not answer with a Response`);
  return result;
}

export function createLeanPath(routes: ServerBuild["routes"]): LeanPath {
  const table = deviceRoutes(routes);
  return {
    paths: [...table.keys()],
    serve(req, url, headers) {
      const module = table.get(url.pathname);
      if (!module) return null;
      const limit = DEVICE_BODY_LIMITS[url.pathname as keyof typeof DEVICE_BODY_LIMITS];
      return runRouteModule(module, leanRequest(req, url, headers, limit));
    },
  };
}
