// A local stand-in for the Resend e-mail API. It accepts what the `resend` SDK sends
// (POST /emails with a Bearer key), validates it the way the hosted service does, keeps
// every message as a JSON file so a restart loses none, and shows them on an inbox page.
//
//   GET  /                 inbox (HTML)          GET /messages/:id   one message (HTML)
//   GET  /api/messages     JSON listing (?to=)   GET /emails/:id     the SDK's "get"
import { randomUUID } from "node:crypto";
import { mkdirSync, readdirSync, readFileSync, renameSync, writeFileSync } from "node:fs";
import { createServer, type IncomingMessage, type ServerResponse } from "node:http";
import path from "node:path";
import { z } from "zod";

export type StoredMessage = {
  id: string;
  from: string;
  to: string[];
  cc: string[];
  bcc: string[];
  replyTo: string[];
  subject: string;
  text: string | null;
  html: string | null;
  createdAt: string;
};

const MAX_BODY = 40 * 1024 * 1024;
const address = z.string().trim().regex(/^(?:[^<>]*<\s*)?[^\s@<>]+@[^\s@<>]+\.[^\s@<>]+\s*>?$/, "Invalid e-mail address");
const addressList = z.union([address, z.array(address).min(1).max(50)]);

// Field names as the SDK sends them (snake_case for reply_to).
const EmailSchema = z
  .object({
    from: address,
    to: addressList,
    subject: z.string().min(1),
    html: z.string().optional(),
    text: z.string().optional(),
    cc: addressList.optional(),
    bcc: addressList.optional(),
    reply_to: addressList.optional(),
    headers: z.record(z.string(), z.string()).optional(),
    tags: z.array(z.object({ name: z.string(), value: z.string() })).optional(),
    scheduled_at: z.string().optional(),
    attachments: z.array(z.unknown()).optional(),
  })
  .passthrough()
  .refine((m) => m.html !== undefined || m.text !== undefined, { message: "Either `html` or `text` must be provided.", path: ["html"] });

function asList(value: string | string[] | undefined): string[] {
  if (value === undefined) return [];
  return Array.isArray(value) ? value : [value];
}

function send(res: ServerResponse, status: number, body: unknown, type = "application/json") {
  const payload = type === "application/json" ? JSON.stringify(body) : String(body);
  res.writeHead(status, { "content-type": `${type}; charset=utf-8`, "content-length": Buffer.byteLength(payload) });
  res.end(payload);
}

function errorBody(statusCode: number, name: string, message: string) {
  return { statusCode, name, message };
}

function readBody(req: IncomingMessage): Promise<string> {
  return new Promise((resolve, reject) => {
    const chunks: Buffer[] = [];
    let size = 0;
    req.on("data", (chunk: Buffer) => {
      size += chunk.length;
      if (size > MAX_BODY) {
        reject(new Error("too large"));
        req.destroy();
      } else chunks.push(chunk);
    });
    req.on("end", () => resolve(Buffer.concat(chunks).toString("utf8")));
    req.on("error", reject);
  });
}

function escapeHtml(value: string): string {
  return value.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
}

function linkify(text: string): string {
  return escapeHtml(text).replace(/https?:\/\/[^\s<]+/g, (url) => `<a href="${url}">${url}</a>`);
}

const page = (title: string, body: string) => `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width,initial-scale=1"><title>${escapeHtml(title)}</title>
<style>body{font-family:system-ui,sans-serif;margin:0;background:#faf8f3;color:#1f1d1a}main{max-width:56rem;margin:0 auto;padding:1.5rem}a{color:#0e5a5e}
table{width:100%;border-collapse:collapse;background:#fff;border:1px solid #e2ddd2}td,th{padding:.5rem .75rem;border-bottom:1px solid #e2ddd2;text-align:left;font-size:14px}
th{font-size:12px;text-transform:uppercase;color:#8a847c}.meta{color:#57534e;font-size:14px}pre{white-space:pre-wrap;background:#fff;border:1px solid #e2ddd2;padding:1rem}
iframe{width:100%;height:24rem;border:1px solid #e2ddd2;background:#fff}</style></head><body><main>${body}</main></body></html>`;

export function createResendFake({ dataDir, apiKeyPrefix = "re_" }: { dataDir: string; apiKeyPrefix?: string }) {
  mkdirSync(dataDir, { recursive: true });

  function save(message: StoredMessage) {
    const file = path.join(dataDir, `${message.createdAt.replace(/[:.]/g, "-")}_${message.id}.json`);
    // Write then rename: a crash never leaves a half-written message behind.
    writeFileSync(`${file}.tmp`, JSON.stringify(message, null, 2));
    renameSync(`${file}.tmp`, file);
  }

  /** Idempotency keys seen in the last 24 hours (in memory, as long as the fake runs). */
  const idempotent = new Map<string, { id: string; at: number }>();

  function list(): StoredMessage[] {
    return readdirSync(dataDir)
      .filter((f) => f.endsWith(".json"))
      .sort()
      .reverse()
      .map((f) => JSON.parse(readFileSync(path.join(dataDir, f), "utf8")) as StoredMessage);
  }

  async function handle(req: IncomingMessage, res: ServerResponse) {
    const url = new URL(req.url ?? "/", "http://localhost");
    const parts = url.pathname.split("/").filter(Boolean);

    if (req.method === "POST" && url.pathname === "/emails") {
      const auth = req.headers.authorization ?? "";
      if (!auth.startsWith("Bearer ")) return send(res, 401, errorBody(401, "missing_api_key", "Missing API key in the authorization header."));
      if (!auth.slice(7).startsWith(apiKeyPrefix)) return send(res, 403, errorBody(403, "invalid_api_key", "API key is invalid."));
      let raw: string;
      try {
        raw = await readBody(req);
      } catch {
        return send(res, 413, errorBody(413, "payload_too_large", "The request body is too large."));
      }
      let json: unknown;
      try {
        json = JSON.parse(raw);
      } catch {
        return send(res, 400, errorBody(400, "invalid_json", "The request body is not valid JSON."));
      }
      const parsed = EmailSchema.safeParse(json);
      if (!parsed.success) {
        const issue = parsed.error.issues[0];
        const field = issue?.path[0] ?? "body";
        const missing = json && typeof json === "object" && !(String(field) in (json as object));
        const message = missing ? `Missing \`${String(field)}\` field.` : `Invalid \`${String(field)}\` field: ${issue?.message}.`;
        return send(res, 422, errorBody(422, missing ? "missing_required_field" : "validation_error", message));
      }
      const m = parsed.data;
      // Idempotency-Key (as Resend): a key seen before answers the first message's id, stores nothing.
      const idempotencyKey = req.headers["idempotency-key"];
      const keyText = typeof idempotencyKey === "string" && idempotencyKey ? idempotencyKey : null;
      const seenId = keyText ? idempotent.get(keyText) : undefined;
      if (seenId && Date.now() - seenId.at < 24 * 3_600_000) return send(res, 200, { id: seenId.id });
      const message: StoredMessage = {
        id: randomUUID(),
        from: m.from,
        to: asList(m.to),
        cc: asList(m.cc),
        bcc: asList(m.bcc),
        replyTo: asList(m.reply_to),
        subject: m.subject,
        text: m.text ?? null,
        html: m.html ?? null,
        createdAt: new Date().toISOString(),
      };
      save(message);
      if (keyText) idempotent.set(keyText, { id: message.id, at: Date.now() });
      return send(res, 200, { id: message.id });
    }

    if (req.method === "GET" && parts[0] === "emails" && parts[1]) {
      const found = list().find((m) => m.id === parts[1]);
      return found ? send(res, 200, { object: "email", ...found, created_at: found.createdAt }) : send(res, 404, errorBody(404, "not_found", "Email not found."));
    }

    if (req.method === "GET" && url.pathname === "/api/messages") {
      const to = url.searchParams.get("to")?.toLowerCase();
      const items = list().filter((m) => !to || m.to.some((t) => t.toLowerCase().includes(to)));
      return send(res, 200, { items, total: items.length });
    }

    if (req.method === "GET" && parts[0] === "messages" && parts[1]) {
      const found = list().find((m) => m.id === parts[1]);
      if (!found) return send(res, 404, page("Not found", "<p>No such message.</p><p><a href='/'>Inbox</a></p>"), "text/html");
      const body = `<p><a href="/">← Inbox</a></p><h1 style="font-size:20px">${escapeHtml(found.subject)}</h1>
<p class="meta">From ${escapeHtml(found.from)}<br>To ${escapeHtml(found.to.join(", "))}<br>${escapeHtml(found.createdAt)}</p>
${found.text ? `<h2 style="font-size:14px">Text</h2><pre>${linkify(found.text)}</pre>` : ""}
${found.html ? `<h2 style="font-size:14px">HTML</h2><iframe sandbox="allow-popups allow-top-navigation-by-user-activation" srcdoc="${escapeHtml(found.html)}"></iframe>` : ""}`;
      return send(res, 200, page(found.subject, body), "text/html");
    }

    if (req.method === "GET" && url.pathname === "/") {
      const items = list();
      const rows = items
        .map((m) => `<tr><td><a href="/messages/${m.id}">${escapeHtml(m.subject)}</a></td><td>${escapeHtml(m.to.join(", "))}</td><td class="meta">${escapeHtml(m.createdAt)}</td></tr>`)
        .join("");
      const body = `<h1 style="font-size:22px">Local inbox</h1><p class="meta">Every message Flyball sent through the local e-mail service (${items.length}). Nothing leaves this machine.</p>
${items.length ? `<table><thead><tr><th>Subject</th><th>To</th><th>Sent</th></tr></thead><tbody>${rows}</tbody></table>` : "<p>No messages yet.</p>"}`;
      return send(res, 200, page("Local inbox", body), "text/html");
    }

    return send(res, 404, errorBody(404, "not_found", "The requested endpoint does not exist."));
  }

  return createServer((req, res) => {
    handle(req, res).catch((error) => send(res, 500, errorBody(500, "internal_server_error", String(error))));
  });
}

// Run directly: `tsx fakes/resend/server.ts`
if (process.argv[1] && path.resolve(process.argv[1]) === path.resolve(new URL(import.meta.url).pathname)) {
  const port = Number(process.env.RESEND_FAKE_PORT ?? 3025);
  const host = process.env.RESEND_FAKE_HOST ?? "127.0.0.1";
  const dataDir = process.env.RESEND_FAKE_DIR ?? path.resolve("data/resend");
  createResendFake({ dataDir }).listen(port, host, () => console.log(`E-mail inbox at http://${host}:${port}/`));
}
