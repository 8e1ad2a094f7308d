// The developer page's API token section: the list, and for members who manage the
// organisation, the create form, the one-time secret and revoke buttons.
import { useState } from "react";
import { Form, useNavigation } from "react-router";
import { Button } from "~/components/ui/button";
import { Field, SelectField } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { isTokenScope, TOKEN_SCOPE_HELP, TOKEN_SCOPE_LABELS, TOKEN_SCOPES } from "~/lib/access/api-token-scope";

export type ApiTokenRow = {
  id: string;
  name: string;
  scope: string;
  prefix: string;
  createdBy: string;
  createdAt: Date | string;
  lastUsedAt: Date | string | null;
  expiresAt: Date | string | null;
  revokedAt: Date | string | null;
};

export type ApiTokenActionResult = {
  ok: boolean;
  message: string;
  errors?: Record<string, string[] | undefined>;
  created?: { name: string; secret: string };
};

// Times in UTC so the server's rendering and the browser's agree; the table header says so.
const when = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", year: "numeric", hour: "2-digit", minute: "2-digit", timeZone: "UTC" });
const format = (value: Date | string) => when.format(new Date(value));

function scopeLabel(scope: string) {
  return isTokenScope(scope) ? TOKEN_SCOPE_LABELS[scope] : scope;
}

function OneTimeSecret({ name, secret }: { name: string; secret: string }) {
  const [copied, setCopied] = useState(false);
  return (
    <Notice tone="success" title={`Token “${name}” created`}>
      <p>Copy it now: this is the only time it is shown. Flyball keeps only a fingerprint of it.</p>
      <div className="mt-2 flex flex-wrap items-center gap-2">
        <code data-testid="new-token-secret" className="min-w-0 max-w-full break-all rounded-md border border-rule bg-white px-2 py-1 font-mono text-xs text-ink">{secret}</code>
        <Button type="button" variant="secondary" className="px-2.5 py-1" onClick={() => navigator.clipboard?.writeText(secret).then(() => setCopied(true))}>
          {copied ? "Copied" : "Copy"}
        </Button>
      </div>
    </Notice>
  );
}

export function ApiTokensPanel({ tokens, manage, slug, actionData }: { tokens: ApiTokenRow[]; manage: boolean; slug: string; actionData?: ApiTokenActionResult }) {
  const busy = useNavigation().state === "submitting";
  return (
    <section aria-labelledby="api-tokens-heading" className="space-y-4">
      <div>
        <h2 id="api-tokens-heading" className="font-semibold">API tokens</h2>
        <p className="mt-1 max-w-3xl text-sm text-ink-soft">
          For your own systems calling the management API (<code className="font-mono text-xs">/api/v1/o/{slug}/…</code>) and the compute API. Send
          {" "}<code className="whitespace-nowrap font-mono text-xs">Authorization: Bearer fbk_…</code>. A token never manages members, billing or the audit log, and it stops working when it expires, is revoked, or the person who made it leaves or no longer manages members.
        </p>
      </div>
      {actionData?.created ? <OneTimeSecret name={actionData.created.name} secret={actionData.created.secret} /> : actionData ? <Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice> : null}
      {manage ? (
        <Form key={actionData?.created?.secret ?? "new-token"} method="post" className="flex flex-col gap-4 rounded-xl border border-rule bg-white p-4 sm:flex-row sm:items-start" noValidate>
          <input type="hidden" name="intent" value="create-token" />
          <Field className="sm:flex-1" label="Name" name="name" required maxLength={80} placeholder="ERP sync" error={actionData?.errors?.name} help="Which system will use it." />
          <SelectField className="sm:w-80" label="Scope" name="scope" defaultValue="read" error={actionData?.errors?.scope} help={<>Read: fleet, loops, findings.<br />Read and write: also registry, machines, bench.</>}>
            {TOKEN_SCOPES.map((s) => <option key={s} value={s} title={TOKEN_SCOPE_HELP[s]}>{TOKEN_SCOPE_LABELS[s]}</option>)}
          </SelectField>
          <Field className="sm:w-40" label="Expires after" name="expiresInDays" type="number" min={1} max={730} unit="days" placeholder="never" error={actionData?.errors?.expiresInDays} help="Blank: no expiry." />
          <Button type="submit" className="sm:mt-6" disabled={busy}>{busy ? "Creating…" : "Create token"}</Button>
        </Form>
      ) : null}
      {tokens.length === 0 ? (
        <p className="rounded-xl border border-dashed border-rule bg-white px-5 py-6 text-sm text-ink-soft">No API tokens yet.{manage ? " Create one for each system that calls Flyball, so you can revoke them one by one." : " Owners and admins create them."}</p>
      ) : (
        <div role="region" tabIndex={0} aria-label="API tokens" className="overflow-x-auto rounded-xl border border-rule bg-white">
          <table className="w-full text-sm">
            <thead className="bg-paper text-left text-xs uppercase tracking-wide text-ink-faint">
              <tr>
                <th className="whitespace-nowrap px-3 py-2 font-medium sm:px-4">Name</th>
                <th className="hidden whitespace-nowrap px-4 py-2 font-medium sm:table-cell">Scope</th>
                <th className="hidden whitespace-nowrap px-4 py-2 font-medium lg:table-cell">Created by</th>
                <th className="hidden whitespace-nowrap px-4 py-2 font-medium md:table-cell">Created (UTC)</th>
                <th className="hidden whitespace-nowrap px-4 py-2 font-medium md:table-cell">Last used (UTC)</th>
                <th className="whitespace-nowrap px-3 py-2 font-medium sm:px-4">Status</th>
                {manage ? <th className="px-3 py-2 text-right font-medium sm:px-4"><span className="sr-only">Actions</span></th> : null}
              </tr>
            </thead>
            <tbody className="divide-y divide-rule">
              {tokens.map((t) => (
                <tr key={t.id} data-testid="api-token-row" className={t.revokedAt ? "text-ink-faint" : undefined}>
                  <td className="px-3 py-2.5 align-top sm:px-4">
                    <span className={`block break-words font-medium ${t.revokedAt ? "" : "text-ink"}`}>{t.name}</span>
                    <code className="block font-mono text-xs text-ink-soft">{`fbk_${t.prefix}…`}</code>
                    <span className="block text-xs text-ink-faint sm:hidden">{scopeLabel(t.scope)}</span>
                    <span className="block text-xs text-ink-faint lg:hidden">by {t.createdBy}</span>
                    <span className="block text-xs text-ink-faint md:hidden">
                      created {format(t.createdAt)} UTC · {t.lastUsedAt ? `used ${format(t.lastUsedAt)} UTC` : "never used"}
                    </span>
                  </td>
                  <td className="hidden whitespace-nowrap px-4 py-2.5 align-top sm:table-cell">{scopeLabel(t.scope)}</td>
                  <td className="hidden px-4 py-2.5 align-top text-ink-soft lg:table-cell">{t.createdBy}</td>
                  <td className="hidden whitespace-nowrap px-4 py-2.5 align-top text-ink-soft tabular md:table-cell">{format(t.createdAt)}</td>
                  <td className="hidden whitespace-nowrap px-4 py-2.5 align-top text-ink-soft tabular md:table-cell">{t.lastUsedAt ? format(t.lastUsedAt) : "Never"}</td>
                  <td className="px-3 py-2.5 align-top sm:px-4">
                    {t.revokedAt ? (
                      <span>Revoked<span className="block text-xs tabular md:whitespace-nowrap">{format(t.revokedAt)}</span></span>
                    ) : t.expiresAt && new Date(t.expiresAt).getTime() <= Date.now() ? (
                      <span>Expired<span className="block text-xs tabular md:whitespace-nowrap">{format(t.expiresAt)}</span></span>
                    ) : (
                      <span className="text-steady">
                        Active
                        {t.expiresAt ? <span className="block text-xs text-ink-soft tabular md:whitespace-nowrap">until {format(t.expiresAt)}</span> : null}
                      </span>
                    )}
                  </td>
                  {manage ? (
                    <td className="px-3 py-2.5 text-right align-top sm:px-4">
                      {t.revokedAt ? null : (
                        <Form method="post" onSubmit={(e) => { if (!confirm(`Revoke “${t.name}”? Systems using it stop working at once.`)) e.preventDefault(); }}>
                          <input type="hidden" name="intent" value="revoke-token" />
                          <input type="hidden" name="id" value={t.id} />
                          <Button variant="danger" className="px-2.5 py-1" disabled={busy} aria-label={`Revoke ${t.name}`}>Revoke</Button>
                        </Form>
                      )}
                    </td>
                  ) : null}
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </section>
  );
}
