// Direct database access for integration tests (the same DATABASE_URL as the app under test).
import { closeDb, getDb } from "~/.server/db/client";

export const db = () => getDb();
export { closeDb };
