import { migrateDatabase } from "./lib/migrate-database";

const url = process.env.DATABASE_URL ?? "postgres://flyball@127.0.0.1:54329/flyball";
await migrateDatabase(url);
console.log("Database migrated.");
