// Vitest global setup: integration tests need the database that scripts/test.sh started.
// Pure unit tests run without it, so a missing DATABASE_URL is not an error here.
export default async function setup() {
  if (!process.env.DATABASE_URL) return;
  const { migrateDatabase } = await import("../scripts/lib/migrate-database");
  await migrateDatabase(process.env.DATABASE_URL);
}
