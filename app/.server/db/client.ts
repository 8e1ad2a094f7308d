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
  pool ??= new pg.Pool({ connectionString: env().DATABASE_URL, max: env().DATABASE_POOL_SIZE });
  return pool;
}

/** The process-wide Drizzle handle, created on first use. */
export function getDb(): Database {
  database ??= drizzle(getPool(), { schema });
  return database;
}

export async function closeDb(): Promise<void> {
  await pool?.end();
  pool = undefined;
  database = undefined;
}
