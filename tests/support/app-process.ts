// Start an extra instance of the built app with different settings (e.g. a broken e-mail
// service), for tests that must see how the app behaves when an outside service fails.
import { spawn, type ChildProcess } from "node:child_process";
import { createServer } from "node:net";

export async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.listen(0, "127.0.0.1", () => {
      const address = server.address();
      server.close(() => (typeof address === "object" && address ? resolve(address.port) : reject(new Error("no port"))));
    });
  });
}

export async function startAppInstance(env: Record<string, string>): Promise<{ url: string; stop: () => Promise<void> }> {
  const port = await freePort();
  const url = `http://127.0.0.1:${port}`;
  const buildDir = process.env.FLYBALL_BUILD_DIR ?? "build";
  const child: ChildProcess = spawn("node", ["scripts/serve.js", `${buildDir}/server/index.js`], {
    env: { ...process.env, NODE_ENV: "production", PORT: String(port), HOST: "127.0.0.1", BETTER_AUTH_URL: url, ...env },
    stdio: "ignore",
  });
  const deadline = Date.now() + 30_000;
  for (;;) {
    try {
      if ((await fetch(url)).ok) break;
    } catch {
      // not listening yet
    }
    if (Date.now() > deadline) throw new Error("extra app instance did not start");
    await new Promise((r) => setTimeout(r, 200));
  }
  return {
    url,
    stop: () =>
      new Promise<void>((resolve) => {
        child.once("exit", () => resolve());
        child.kill("SIGTERM");
      }),
  };
}
