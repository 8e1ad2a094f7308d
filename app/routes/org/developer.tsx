import { useState } from "react";
import { data } from "react-router";
import { z } from "zod";
import { CreateApiTokenSchema, createApiToken, listApiTokens, revokeApiToken } from "~/.server/auth/api-tokens";
import { requireCapability, requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { getDeviceApiDocument } from "~/.server/device-api/openapi";
import { env } from "~/.server/env";
import { ApiTokensPanel, type ApiTokenActionResult } from "~/components/developer/api-tokens-panel";
import { PageHeader } from "~/components/org-shell";
import { can } from "~/lib/access/capabilities";
import { parseForm } from "~/lib/forms";
import { exampleDigestFields } from "~/lib/health/digest-fields";
import type { Route } from "./+types/developer";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:manage");
  const tokens = await listApiTokens(getDb(), { organisationId: membership.organisation.id });
  const doc = getDeviceApiDocument() as unknown as {
    paths: Record<string, Record<string, { summary?: string; description?: string; responses: Record<string, { description: string }> }>>;
    components: { schemas: Record<string, { properties?: Record<string, { type?: string | string[]; description?: string; minimum?: number; maximum?: number }>; required?: string[] }> };
  };
  return { slug: membership.organisation.slug, doc, baseUrl: env().BETTER_AUTH_URL, tokens, manageTokens: can(membership.role, "members:manage") };
}

const IntentSchema = z.object({ intent: z.enum(["create-token", "revoke-token"]) });
const IdSchema = z.object({ id: z.uuid() });

function result(body: ApiTokenActionResult, status = 200) {
  return data<ApiTokenActionResult>(body, { status });
}

export async function action({ request, params }: Route.ActionArgs) {
  const membership = requireCapability(await requireCapableMember(request, params.slug, "registry:manage"), "members:manage");
  const form = await request.formData();
  const intent = IntentSchema.safeParse(Object.fromEntries(form));
  if (!intent.success) return result({ ok: false, message: "Unknown action." }, 400);
  const db = getDb();
  try {
    if (intent.data.intent === "create-token") {
      const parsed = parseForm(CreateApiTokenSchema, form);
      if (!parsed.ok) return result({ ok: false, message: "Check the token's name and scope.", errors: parsed.errors }, 400);
      const created = await createApiToken(db, membership, parsed.data);
      return result({ ok: true, message: "Token created.", created: { name: created.name, secret: created.secret } });
    }
    const parsed = parseForm(IdSchema, form);
    if (!parsed.ok) return result({ ok: false, message: "No token given." }, 400);
    await revokeApiToken(db, membership, parsed.data.id);
    return result({ ok: true, message: "Token revoked. Requests with it are refused from now on." });
  } catch (error) {
    return actionFailure<ApiTokenActionResult>(error);
  }
}

function Copyable({ label, text }: { label: string; text: string }) {
  const [copied, setCopied] = useState(false);
  return (
    <div className="rounded-xl border border-rule bg-white">
      <div className="flex items-center justify-between border-b border-rule px-3 py-1.5 text-xs text-ink-faint">
        <span>{label}</span>
        <button type="button" className="text-accent hover:underline" onClick={() => navigator.clipboard?.writeText(text).then(() => setCopied(true))}>{copied ? "Copied" : "Copy"}</button>
      </div>
      <pre role="region" tabIndex={0} aria-label={label} className="overflow-x-auto px-3 py-2 font-mono text-xs leading-relaxed">{text}</pre>
    </div>
  );
}

export default function Developer({ loaderData, actionData }: Route.ComponentProps) {
  const { slug, doc, baseUrl, tokens, manageTokens } = loaderData;
  const digest = doc.components.schemas.Digest;
  const tokenSnippet = `// Node 20, jose: a fresh token for every request
import { SignJWT, importJWK } from "jose";
const key = await importJWK(devicePrivateJwk, "EdDSA");
const now = Math.floor(Date.now() / 1000);
const token = await new SignJWT({})
  .setProtectedHeader({ alg: "EdDSA", kid: deviceId })
  .setIssuer(deviceId).setAudience("flyball-device")
  .setIssuedAt(now).setExpirationTime(now + 120)   // at most 300 s
  .setJti(crypto.randomUUID())                    // never reuse
  .sign(key);`;
  const curl = `curl -sS ${baseUrl}/api/v1/device/digests \\
  -H "Authorization: Bearer $TOKEN" \\
  -H "Content-Type: application/json" \\
  -d '${JSON.stringify({ digests: [{ loop: "zone_1", seq: 1042, windowStart: "2026-03-02T10:00:00Z", windowEnd: "2026-03-02T10:01:00Z", ...exampleDigestFields(60) }] })}'
# → {"accepted":1,"duplicates":0,"rejected":[]}`;
  return (
    <>
      <PageHeader title="Developer" description={<>API tokens for your own systems, and the device API your controllers speak. The machine-readable contract is <a className="link-in-text" href="/api/v1/openapi.json">/api/v1/openapi.json</a> (OpenAPI 3.1); configuration signing keys are at <a className="link-in-text" href={`/api/v1/o/${slug}/jwks.json`}>/api/v1/o/{slug}/jwks.json</a>.</>} />
      <div className="border-b border-rule px-5 py-6 sm:px-8">
        <ApiTokensPanel tokens={tokens} manage={manageTokens} slug={slug} actionData={actionData} />
      </div>
      <div className="grid gap-8 px-5 py-6 sm:px-8 xl:grid-cols-2">
        <section className="min-w-0 space-y-4">
          <h2 className="font-semibold">Worked example: post one digest</h2>
          <ol className="list-decimal space-y-1 pl-5 text-sm text-ink-soft">
            <li>Register the machine and note its one-time enrolment code.</li>
            <li>The controller makes an Ed25519 (or P-256) key pair and posts its public JWK with the code to <code className="font-mono text-xs">/api/v1/device/enrol</code>; the answer holds its device id.</li>
            <li>For every call it signs a short-lived token with its private key, then posts digests or pulls its configuration.</li>
          </ol>
          <Copyable label="Sign a device token" text={tokenSnippet} />
          <Copyable label="Request" text={curl} />
        </section>
        <section className="min-w-0 space-y-4">
          <h2 className="font-semibold">Endpoints</h2>
          {Object.entries(doc.paths).map(([path, methods]) =>
            Object.entries(methods).map(([method, op]) => (
              <article key={`${method} ${path}`} className="rounded-xl border border-rule bg-white p-3 text-sm">
                <h3 className="font-mono text-xs"><span className="mr-2 rounded bg-accent-wash px-1.5 py-0.5 font-semibold uppercase text-accent-strong">{method}</span>{path}</h3>
                <p className="mt-1 font-medium">{op.summary}</p>
                {op.description ? <p className="mt-0.5 text-ink-soft">{op.description}</p> : null}
                <ul className="mt-2 space-y-0.5 text-xs text-ink-soft">
                  {Object.entries(op.responses).map(([status, r]) => <li key={status}><span className="tabular font-semibold text-ink">{status}</span> {r.description}</li>)}
                </ul>
              </article>
            )),
          )}
          <h2 className="pt-2 font-semibold">Digest fields</h2>
          <div role="region" tabIndex={0} aria-label="Digest fields" className="overflow-x-auto rounded-xl border border-rule bg-white">
            <table className="w-full text-xs">
              <thead className="bg-paper text-left uppercase tracking-wide text-ink-faint"><tr><th className="px-3 py-1.5">Field</th><th className="px-3 py-1.5">Type</th><th className="px-3 py-1.5">Meaning</th></tr></thead>
              <tbody className="divide-y divide-rule">
                {Object.entries(digest?.properties ?? {}).map(([name, p]) => (
                  <tr key={name}><td className="px-3 py-1 font-mono">{name}</td><td className="px-3 py-1 text-ink-soft">{String(p.type ?? "")}{p.minimum === 0 && p.maximum === 1 ? " 0..1" : ""}</td><td className="px-3 py-1 text-ink-soft">{p.description ?? ""}</td></tr>
                ))}
              </tbody>
            </table>
          </div>
        </section>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Developer · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
