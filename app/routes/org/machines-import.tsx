import { toCsv } from "~/lib/csv";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { requireActiveSubscription } from "~/.server/billing/enforce";
import { requestQuantitySync } from "~/.server/billing/quantity";

import { importMachinesFromCsv, readImportUpload, type MachineImportReport } from "~/.server/fleet/machine-import";
import { listRegistryOptions } from "~/.server/fleet/registry";
import { getSiteScope } from "~/.server/fleet/scope";
import { ImportReport } from "~/components/fleet/import-report";
import { PageHeader } from "~/components/org-shell";
import { Button, buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { IMPORT_MODES, MAX_IMPORT_ROWS, siteLabel, type ImportMode } from "~/lib/fleet/machine-import";
import type { Route } from "./+types/machines-import";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "machines:manage");
  const db = getDb();
  const options = await listRegistryOptions(db, await getSiteScope(db, membership));
  return {
    slug: membership.organisation.slug,
    models: options.models.map((m) => m.name),
    sites: options.sites.map((s) => ({ name: s.name, label: siteLabel(s) })),
  };
}

const ModeSchema = z.enum(IMPORT_MODES, "Choose how to import.");

type ActionResult = { ok: false; message: string } | { ok: true; report: MachineImportReport };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "machines:manage");
  const upload = await readImportUpload(request);
  // Closing after a 413 keeps the unread rest of the body from spoiling the connection.
  if (!upload.ok) return data<ActionResult>({ ok: false, message: upload.message }, { status: upload.status, headers: upload.status === 413 ? { connection: "close" } : undefined });
  const mode = ModeSchema.safeParse(upload.mode);
  if (!mode.success) return data<ActionResult>({ ok: false, message: "Choose how to import." }, { status: 400 });
  const db = getDb();
  try {
    const organisationId = membership.organisation.id;
    const report = await importMachinesFromCsv(db, { scope: await getSiteScope(db, membership), actor: membership.user.id, text: upload.text, mode: mode.data, beforeRegister: (adding) => requireActiveSubscription(db, organisationId, { adding }) });
    if (report.imported.length > 0) await requestQuantitySync(db, { organisationId });
    return data<ActionResult>({ ok: true, report }, { status: report.outcome === "refused" ? 422 : 200 });
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

const MODE_CHOICES: { value: ImportMode; label: string; help: string }[] = [
  { value: "all-or-nothing", label: "Only if every row is valid", help: "One bad row and nothing is registered; the report names each problem." },
  { value: "valid-rows", label: "Import the valid rows", help: "Registers every row that passes and skips the others, each with its reason." },
  { value: "check", label: "Check only", help: "Reports what would happen and registers nothing." },
];

export default function ImportMachines({ loaderData, actionData }: Route.ComponentProps) {
  const { slug, models, sites } = loaderData;
  const navigation = useNavigation();
  const busy = navigation.state === "submitting";
  const sent = actionData?.ok ? actionData.report.mode : undefined;
  const template = toCsv(["serial", "model", "site", "firmware"], [["EXAMPLE-0001", models[0] ?? "Model name", sites[0]?.name ?? "Site name", "1.0.0"]]);
  return (
    <>
      <PageHeader
        title="Import machines"
        crumbs={[{ label: "Machines", to: `/o/${slug}/machines` }, { label: "Import" }]}
        description="Register many machines from one CSV file. Each row is checked before anything is written; each machine gets its loops and a one-time enrolment code."
        action={<Link to={`/o/${slug}/machines/new`} className={buttonClass("secondary")}>Register one machine</Link>}
      />
      <div className="space-y-6 px-5 py-6 sm:px-8">
        {actionData && !actionData.ok ? <div className="max-w-xl"><Notice tone="error" title="The file was not imported">{actionData.message}</Notice></div> : null}
        {actionData?.ok ? <div className="max-w-4xl"><ImportReport report={actionData.report} slug={slug} /></div> : null}

        {models.length === 0 || sites.length === 0 ? (
          <div className="max-w-xl">
            <Notice tone="info" title="Something is missing first">
              Machines need a model and a site to be imported into.{" "}
              {models.length === 0 ? <Link to={`/o/${slug}/models`} className="link-in-text">Add a machine model</Link> : <Link to={`/o/${slug}/customers`} className="link-in-text">Add a customer site</Link>}.
            </Notice>
          </div>
        ) : (
          <div className="grid max-w-4xl gap-6 lg:grid-cols-[minmax(0,36rem)_minmax(0,1fr)]">
            <Form method="post" encType="multipart/form-data" className="space-y-5 rounded-xl border border-rule bg-white p-5" aria-busy={busy}>
              <div>
                <label htmlFor="import-file" className="block text-sm font-medium text-ink">CSV file</label>
                <input
                  id="import-file"
                  name="file"
                  type="file"
                  accept=".csv,text/csv"
                  required
                  aria-describedby="import-file-help"
                  className="mt-1 block w-full rounded-md border border-rule bg-white text-sm text-ink file:mr-3 file:border-0 file:border-r file:border-rule file:bg-paper-deep file:px-3 file:py-2 file:text-sm file:font-medium file:text-ink hover:file:bg-paper"
                />
                <p id="import-file-help" className="mt-1 text-xs text-ink-faint">
                  A header row <code className="font-mono">serial,model,site,firmware</code>, then one machine per row; at most {MAX_IMPORT_ROWS.toLocaleString("en-GB")} rows and 1 MB.
                </p>
              </div>
              <fieldset>
                <legend className="text-sm font-medium text-ink">When some rows have problems</legend>
                <div className="mt-2 space-y-2">
                  {MODE_CHOICES.map((choice) => (
                    <label key={choice.value} className="flex cursor-pointer gap-2.5 rounded-md border border-rule px-3 py-2 has-[:checked]:border-accent has-[:checked]:bg-accent-wash">
                      <input type="radio" name="mode" value={choice.value} defaultChecked={choice.value === (sent ?? "all-or-nothing")} className="mt-0.5 accent-accent" />
                      <span>
                        <span className="block text-sm font-medium text-ink">{choice.label}</span>
                        <span className="block text-xs text-ink-faint">{choice.help}</span>
                      </span>
                    </label>
                  ))}
                </div>
              </fieldset>
              <div className="flex flex-wrap items-center gap-3">
                <Button type="submit" disabled={busy}>{busy ? "Checking and importing…" : "Upload and check"}</Button>
                <Link to={`/o/${slug}/machines`} className={buttonClass("secondary")}>Cancel</Link>
              </div>
              {busy ? <p role="status" className="text-xs text-ink-soft">Checking every row, then registering them; a file of 2 000 machines takes up to half a minute.</p> : null}
            </Form>

            <aside className="space-y-3 text-sm text-ink-soft">
              <h2 className="text-sm font-semibold text-ink">How rows are read</h2>
              <ul className="list-disc space-y-1 pl-5">
                <li><strong className="font-medium text-ink">serial</strong>: as on the rating plate, new to this organisation and once per file.</li>
                <li><strong className="font-medium text-ink">model</strong> and <strong className="font-medium text-ink">site</strong>: a name (or id) of this organisation. Two customers with a site of the same name? Write <code className="font-mono text-xs">Customer: Site</code>.</li>
                <li><strong className="font-medium text-ink">firmware</strong>: optional; the controller reports it when it enrols.</li>
              </ul>
              <a href={`data:text/csv;charset=utf-8,${encodeURIComponent(template)}`} download="flyball-machines-template.csv" className="inline-block font-medium text-accent hover:underline">
                Download a template
              </a>
              <details className="rounded-md border border-rule bg-white px-3 py-2">
                <summary className="cursor-pointer font-medium text-ink">Names you can use ({models.length} {models.length === 1 ? "model" : "models"}, {sites.length} {sites.length === 1 ? "site" : "sites"})</summary>
                <p className="mt-2 text-xs uppercase tracking-wide text-ink-faint">Models</p>
                <ul className="mt-1 space-y-0.5">{models.map((m) => <li key={m}>{m}</li>)}</ul>
                <p className="mt-3 text-xs uppercase tracking-wide text-ink-faint">Sites</p>
                <ul className="mt-1 space-y-0.5">{sites.map((s) => <li key={s.label}>{s.label}</li>)}</ul>
              </details>
            </aside>
          </div>
        )}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Import machines · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
