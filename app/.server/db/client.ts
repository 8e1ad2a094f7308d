import { drizzle, type NodePgDatabase } from "drizzle-orm/node-postgres";
import pg from "pg";
import { env } from "~/.server/env";
import * as schema from "./schema";

export type Database = NodePgDatabase<typeof schema>;
/** A database handle or an open transaction: data functions accept either. */
export type Db = Database | Parameters<Parameters<Database["transaction"]>[0]>[0];

let pool: pg.Pool | undefined;
let database: Database | undefined;

export function getPool(): pg.Pool {
  // Generic plans for named (prepared) statements: only the device API's hot statements are
  // named, and their array-driven plans do not depend on the values; re-planning them per
  // call cost more than running them. Drizzle's queries are unnamed and always planned anew.
  pool ??= new pg.Pool({ connectionString: env().DATABASE_URL, max: env().DATABASE_POOL_SIZE, options: "-c plan_cache_mode=force_generic_plan" });
  return pool;
}

let ingestPool: pg.Pool | undefined;

/**
 * A few connections for the digest ingest statement alone (device-api/ingest.ts), with nested
 * loops turned off. Its rows come from unnest() of array parameters and from RETURNING of the
 * statement's own inserts, which the planner cannot count: it guesses one row and joins them
 * with nested loops, quadratic in the batch (a 1 600-digest batch took seconds). Hash joins
 * are linear. The same setting would hurt ordinary queries, hence a pool of its own.
 */
export function getIngestPool(): pg.Pool {
  ingestPool ??= new pg.Pool({ connectionString: env().DATABASE_URL, max: 3, options: "-c plan_cache_mode=force_generic_plan -c enable_nestloop=off" });
  return ingestPool;
}

/** The process-wide Drizzle handle, created on first use. */
export function getDb(): Database {
  database ??= drizzle(getPool(), { schema });
  return database;
}

export async function closeDb(): Promise<void> {
  await pool?.end();
  await ingestPool?.end();
  pool = undefined;
  ingestPool = undefined;
  database = undefined;
}
