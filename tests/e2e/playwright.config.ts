import { defineConfig } from "@playwright/test";

const port = process.env.TEST_APP_PORT ?? "3100";

// The app is built and started by scripts/test.sh; Playwright only drives Debian's Chromium.
export default defineConfig({
  testDir: ".",
  // One folder per app port, so parallel runs (see DEVELOPERS.md) do not clear each other's.
  outputDir: `../../data/test-reports-${port}/playwright-output`,
  timeout: 60_000,
  expect: { timeout: 10_000 },
  workers: 1,
  retries: 0,
  use: {
    baseURL: `http://127.0.0.1:${port}`,
    trace: "retain-on-failure",
    launchOptions: {
      executablePath: "/usr/bin/chromium",
      args: [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
      ],
    },
  },
});
