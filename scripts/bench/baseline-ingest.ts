// The bare baseline for the ingest bench: node:http + pg, no auth, no validation. It inserts
// the same rows into the same digest table (one multi-row INSERT per request) and answers
// config pulls with 304 after the same loop lookup, or (GET /static-config) with no work at all.
// GET /verified-config checks the device token's signature and claims with jose and nothing
// else (no replay check, no database per request): the floor of any device API that verifies.
import http from "node:http";
import { decodeProtectedHeader, importJWK, jwtVerify, type CryptoKey } from "jose";
import pg from "pg";
import { DIGEST_FIELDS, digestSqlType } from "~/lib/health/digest-fields";

const port = Number(process.env.BASELINE_PORT ?? 3301);
const pool = new pg.Pool({ connectionString: process.env.DATABASE_URL, max: Number(process.env.DATABASE_POOL_SIZE ?? 10) });
const COLS = ["loop_id", "seq", "window_start", "window_end", ...DIGEST_FIELDS.map((f) => f.column)];
const TYPES = ["uuid", "int4", "timestamptz", "timestamptz", ...DIGEST_FIELDS.map((f) => digestSqlType(f))];
const SQL = `insert into digest (organisation_id, ${COLS.join(", ")}) select $1, * from unnest(${TYPES.map((t, i) => `$${i + 2}::${t}[]`).join(", ")}) on conflict do nothing`;
const FIELDS = ["loopId", "seq", "windowStart", "windowEnd", ...DIGEST_FIELDS.map((f) => f.name)];

const keys = new Map<string, Promise<{ alg: string; key: CryptoKey | Uint8Array }>>();
function keyOf(kid: string) {
  let key = keys.get(kid);
  if (!key) {
    key = pool.query<{ alg: string; public_jwk: Record<string, string> }>("select alg, public_jwk from device where id = $1", [kid]).then(async ({ rows: [row] }) => ({ alg: row.alg, key: await importJWK({ ...row.public_jwk, alg: row.alg }, row.alg) }));
    keys.set(kid, key);
  }
  return key;
}

async function verified(req: http.IncomingMessage): Promise<boolean> {
  const token = (req.headers.authorization ?? "").slice("Bearer ".length);
  const kid = decodeProtectedHeader(token).kid!;
  const { alg, key } = await keyOf(kid);
  await jwtVerify(token, key, { algorithms: [alg], audience: "flyball-device", issuer: kid, requiredClaims: ["iat", "exp", "jti"] });
  return true;
}

http
  .createServer((req, res) => {
    if (req.method === "GET" && req.url === "/static-config") {
      res.writeHead(304, { etag: '"x"' }).end();
      return;
    }
    if (req.method === "GET" && req.url === "/verified-config") {
      verified(req).then(() => res.writeHead(304, { etag: '"x"' }).end(), () => res.writeHead(401).end());
      return;
    }
    if (req.method === "GET") {
      const organisationId = String(req.headers["x-organisation"]);
      const machineId = String(req.headers["x-machine"]);
      pool
        .query({ name: "loops", text: "select key, config_version from loop where organisation_id = $1 and machine_id = $2 order by key", values: [organisationId, machineId] })
        .then(() => res.writeHead(304, { etag: '"x"' }).end(), () => res.writeHead(500).end());
      return;
    }
    const chunks: Buffer[] = [];
    req.on("data", (c: Buffer) => chunks.push(c));
    req.on("end", () => {
      const body = JSON.parse(Buffer.concat(chunks).toString()) as { organisationId: string; digests: Record<string, unknown>[] };
      const columns = FIELDS.map((f) => body.digests.map((d) => d[f]));
      pool.query({ name: "ins", text: SQL, values: [body.organisationId, ...columns] }).then(
        (r) => res.writeHead(200, { "content-type": "application/json" }).end(JSON.stringify({ accepted: r.rowCount })),
        (e) => res.writeHead(500).end(String(e)),
      );
    });
  })
  .listen(port, "127.0.0.1", () => console.log(`baseline on ${port}`));
