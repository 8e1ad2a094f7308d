import { defineConfig } from "drizzle-kit";

// Generation needs no database; the URL is only used by `drizzle-kit studio`.
export default defineConfig({
  dialect: "postgresql",
  schema: "./app/.server/db/schema/index.ts",
  out: "./drizzle",
  dbCredentials: { url: process.env.DATABASE_URL ?? "postgres://flyball@127.0.0.1:54329/flyball" },
});
