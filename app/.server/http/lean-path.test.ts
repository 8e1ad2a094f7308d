// The lean path over a real HTTP socket: bodies read only when the route asks, never past the
// route's limit, and the device routes answering the same through the lean path as through
// the framework's way of building a Request (a streamed body). No database: every case here is
// decided before the device's token reaches PostgreSQL.
import http, { type IncomingMessage } from "node:http";
import { Readable } from "node:stream";
import type { ServerBuild } from "react-router";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import * as ack from "~/routes/api/device/config-ack";
import * as config from "~/routes/api/device/config";
import * as digests from "~/routes/api/device/digests";
import * as enrol from "~/routes/api/device/enrol";
import { readLimitedBytes } from "./body";
import { createLeanPath, runRouteModule } from "./lean-path";

const route = (id: string, path: string, module: unknown) => ({ id, parentId: "root", path, module });
const routes = {
  root: { id: "root", path: "", module: {} },
  enrol: route("enrol", "api/v1/device/enrol", enrol),
  digests: route("digests", "api/v1/device/digests", digests),
  config: route("config", "api/v1/device/config", config),
  ack: route("ack", "api/v1/device/config/ack", ack),
  echo: route("echo", "api/v1/device/echo", {}),
} as unknown as ServerBuild["routes"];

const lean = createLeanPath(routes);
const modules: Record<string, unknown> = { "/api/v1/device/enrol": enrol, "/api/v1/device/digests": digests, "/api/v1/device/config": config, "/api/v1/device/config/ack": ack };

/** The framework's way: the whole body as a stream on the Request. */
function frameworkRequest(req: IncomingMessage, url: URL, headers: Headers) {
  const hasBody = req.method !== "GET" && req.method !== "HEAD";
  return new Request(url, { method: req.method, headers, ...(hasBody ? { body: Readable.toWeb(req) as ReadableStream, duplex: "half" } : {}) } as RequestInit);
}

let server: http.Server;
let base = "";
const bodyFlowed: boolean[] = [];

beforeAll(async () => {
  server = http.createServer(async (req, res) => {
    const url = new URL(req.url!, "http://flyball.test");
    const headers = new Headers();
    for (let i = 0; i < req.rawHeaders.length; i += 2) headers.append(req.rawHeaders[i]!, req.rawHeaders[i + 1]!);
    const way = url.searchParams.get("way");
    const response = way === "framework" ? await runRouteModule(modules[url.pathname] as never, frameworkRequest(req, url, headers)) : await lean.serve(req, url, headers)!;
    bodyFlowed.push(req.readableFlowing === true || req.readableEnded);
    res.writeHead(response.status, Object.fromEntries(response.headers));
    res.end(Buffer.from(await response.arrayBuffer()));
  });
  await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
  const address = server.address() as { port: number };
  base = `http://127.0.0.1:${address.port}`;
});
afterAll(() => new Promise<void>((resolve) => server.close(() => resolve())));

async function both(path: string, init: RequestInit) {
  const answers = [];
  for (const way of ["lean", "framework"]) {
    const response = await fetch(`${base}${path}?way=${way}`, init);
    answers.push({ status: response.status, body: await response.text(), allow: response.headers.get("allow") });
  }
  return answers;
}

const malformedToken = { authorization: "Bearer not-a-token" };

describe("the lean path", () => {
  it("serves exactly the device routes of the build", () => {
    expect(lean.paths.sort()).toEqual(["/api/v1/device/config", "/api/v1/device/config/ack", "/api/v1/device/digests", "/api/v1/device/enrol"]);
  });

  it.each([
    ["a GET of the digests route", "/api/v1/device/digests", { method: "GET" }, 405],
    ["a POST of the config route", "/api/v1/device/config", { method: "POST", body: "{}" }, 405],
    ["digests without a token", "/api/v1/device/digests", { method: "POST", headers: { "content-type": "application/json" }, body: "{}" }, 401],
    ["digests with a malformed token", "/api/v1/device/digests", { method: "POST", headers: { "content-type": "application/json", ...malformedToken }, body: '{"digests":[]}' }, 401],
    ["a config pull with a malformed token", "/api/v1/device/config", { method: "GET", headers: malformedToken }, 401],
    ["an ack with a malformed token and a large body", "/api/v1/device/config/ack", { method: "POST", headers: { "content-type": "application/json", ...malformedToken }, body: "x".repeat(100_000) }, 401],
    ["digests declared larger than 256 KiB", "/api/v1/device/digests", { method: "POST", headers: { "content-type": "application/json" }, body: "x".repeat(300 * 1024) }, 413],
    ["an enrolment that is not JSON", "/api/v1/device/enrol", { method: "POST", headers: { "content-type": "text/plain" }, body: "hello" }, 415],
    ["an enrolment body larger than 16 KiB", "/api/v1/device/enrol", { method: "POST", headers: { "content-type": "application/json" }, body: `"${"x".repeat(20_000)}"` }, 413],
    ["an enrolment with broken JSON", "/api/v1/device/enrol", { method: "POST", headers: { "content-type": "application/json" }, body: "{" }, 400],
    ["an enrolment that fails its schema", "/api/v1/device/enrol", { method: "POST", headers: { "content-type": "application/json" }, body: '{"enrolmentCode":"short"}' }, 400],
  ] as const)("answers %s the same both ways", async (_name, path, init, status) => {
    const [viaLean, viaFramework] = await both(path, init as RequestInit);
    expect(viaLean!.status).toBe(status);
    expect(viaLean).toEqual(viaFramework);
  });

  it("does not read the body of a request whose token is refused", async () => {
    bodyFlowed.length = 0;
    const response = await fetch(`${base}/api/v1/device/config/ack`, { method: "POST", headers: { "content-type": "application/json", ...malformedToken }, body: "x".repeat(200_000) });
    expect(response.status).toBe(401);
    expect(bodyFlowed).toEqual([false]);
  });

  it("hands a route no more than its limit, and the bytes when they fit", async () => {
    const request = (size: number) => {
      const req = Readable.from([Buffer.alloc(size, 97)]) as unknown as IncomingMessage;
      Object.assign(req, { method: "POST", headers: { "content-length": String(size) }, complete: true });
      return req;
    };
    const echo = { action: async ({ request }: { request: Request }) => new Response(String((await readLimitedBytes(request, 16 * 1024))?.byteLength ?? "too large")) };
    const { leanRequest } = await import("./lean-path");
    const fits = await runRouteModule(echo, leanRequest(request(1000), new URL("http://x/"), new Headers(), 16 * 1024));
    expect(await fits.text()).toBe("1000");
    const over = await runRouteModule(echo, leanRequest(request(20_000), new URL("http://x/"), new Headers(), 16 * 1024));
    expect(await over.text()).toBe("too large");
  });
});
