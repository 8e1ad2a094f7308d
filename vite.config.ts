/// <reference types="vitest/config" />
import { reactRouter } from "@react-router/dev/vite";
import tailwindcss from "@tailwindcss/vite";
import { defineConfig } from "vite";

// Vitest reads this file too; the React Router plugin is only for the app build.
const underVitest = Boolean(process.env.VITEST);

export default defineConfig({
  plugins: underVitest ? [] : [tailwindcss(), reactRouter()],
  resolve: { tsconfigPaths: true },
  server: { host: "127.0.0.1" },
  test: {
    include: ["app/**/*.test.ts", "tests/integration/**/*.test.ts", "fakes/**/*.test.ts", "scripts/**/*.test.ts"],
    globalSetup: ["tests/global-setup.ts"],
    testTimeout: 30_000,
    hookTimeout: 60_000,
    fileParallelism: false,
  },
});
