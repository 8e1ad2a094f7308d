import { DomainError } from "~/lib/errors";
import { data, Form, Link, useNavigation } from "react-router";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { requireActiveSubscription } from "~/.server/billing/enforce";
import { requestQuantitySync } from "~/.server/billing/quantity";

import { registerMachine } from "~/.server/fleet/machines";
import { RegisterMachineSchema } from "~/lib/fleet/schemas";
import { listRegistryOptions } from "~/.server/fleet/registry";
import { getSiteScope } from "~/.server/fleet/scope";
import { formatDateTime } from "~/components/fleet/format";
import { PageHeader } from "~/components/org-shell";
import { Button, buttonClass } from "~/components/ui/button";
import { Field, SelectField } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { parseForm, type FieldErrors } from "~/lib/forms";
import type { Route } from "./+types/machines-new";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "machines:manage");
  const db = getDb();
  return { options: await listRegistryOptions(db, await getSiteScope(db, membership)), slug: membership.organisation.slug };
}

type ActionResult =
  | { ok: false; message: string; errors?: FieldErrors }
  | { ok: true; message: string; machineId: string; serial: string; code: string; expiresAt: string };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "machines:manage");
  const parsed = parseForm(RegisterMachineSchema, await request.formData());
  if (!parsed.ok) return data<ActionResult>({ ok: false, message: "Check the highlighted fields.", errors: parsed.errors }, { status: 400 });
  try {
    await requireActiveSubscription(getDb(), membership.organisation.id, { adding: 1 });
    const created = await getDb().transaction((tx) => registerMachine(tx, { organisationId: membership.organisation.id, actor: membership.user.id, input: parsed.data }));
    await requestQuantitySync(getDb(), { organisationId: membership.organisation.id });
    return data<ActionResult>({ ok: true, message: `${created.machine.serial} is registered.`, machineId: created.machine.id, serial: created.machine.serial, code: created.enrolmentCode.code, expiresAt: created.enrolmentCode.expiresAt.toISOString() });
  } catch (error) {
    if (error instanceof DomainError) {
      const field = error.code === "serial_taken" ? "serial" : error.code === "unknown_site" ? "siteId" : error.code === "unknown_model" ? "modelId" : "form";
      return data<ActionResult>({ ok: false, message: error.message, errors: { [field]: [error.message] } }, { status: error.status });
    }
    throw error;
  }
}

export default function RegisterMachine({ loaderData, actionData }: Route.ComponentProps) {
  const { options, slug } = loaderData;
  const busy = useNavigation().state === "submitting";
  const errors = actionData && !actionData.ok ? actionData.errors : undefined;
  return (
    <>
      <PageHeader title="Register a machine" crumbs={[{ label: "Machines", to: `/o/${slug}/machines` }, { label: "Register" }]} description="The machine gets its model's loops and a one-time code for its controller to enrol with." />
      <div className="max-w-xl space-y-4 px-5 py-6 sm:px-8">
        {actionData?.ok ? (
          <Notice tone="success" title={actionData.message}>
            Enter this code on the controller. It is shown only now, works once and expires {formatDateTime(actionData.expiresAt)}:
            <code className="mt-2 block select-all rounded bg-white px-2 py-1.5 font-mono text-base text-ink">{actionData.code}</code>
            <Link to={`/o/${slug}/machines/${actionData.machineId}`} className="mt-2 inline-block text-accent hover:underline">Open {actionData.serial}</Link>
          </Notice>
        ) : actionData ? <Notice tone="error">{actionData.message}</Notice> : null}
        {options.models.length === 0 || options.sites.length === 0 ? (
          <Notice tone="info" title="Something is missing first">
            A machine needs a model and a site. {options.models.length === 0 ? <Link to={`/o/${slug}/models`} className="link-in-text">Add a machine model</Link> : <Link to={`/o/${slug}/customers`} className="link-in-text">Add a customer site</Link>}.
          </Notice>
        ) : (
          <Form method="post" className="space-y-4 rounded-xl border border-rule bg-white p-5" noValidate>
            <Field label="Serial" name="serial" required error={errors?.serial} help="As printed on the machine's rating plate; unique in your organisation." />
            <SelectField label="Model" name="modelId" error={errors?.modelId} help="The machine gets one loop per loop template of the model.">
              {options.models.map((m) => <option key={m.id} value={m.id}>{m.name}</option>)}
            </SelectField>
            <SelectField label="Site" name="siteId" error={errors?.siteId} help="Where the machine is installed.">
              {options.sites.map((s) => <option key={s.id} value={s.id}>{s.customerName}: {s.name}</option>)}
            </SelectField>
            <Field label="Firmware" name="firmware" error={errors?.firmware} help="Optional; the device reports it when it enrols." />
            <div className="flex gap-2">
              <Button type="submit" disabled={busy}>{busy ? "Registering…" : "Register machine"}</Button>
              <Link to={`/o/${slug}/machines`} className={buttonClass("secondary")}>Cancel</Link>
            </div>
          </Form>
        )}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Register a machine · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
