import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";

import { addCustomer, addSite, listCustomers, listSites } from "~/.server/fleet/registry";
import { CustomerInputSchema, SiteInputSchema, TIME_ZONES } from "~/lib/fleet/schemas";
import { getSiteScope } from "~/.server/fleet/scope";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { Field, SelectField } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { parseForm, type FieldErrors } from "~/lib/forms";
import type { Route } from "./+types/customers";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:manage");
  const db = getDb();
  const scope = await getSiteScope(db, membership);
  const [customers, sites] = await Promise.all([listCustomers(db, scope, { page: 1, pageSize: 200 }), listSites(db, scope, { page: 1, pageSize: 200 })]);
  return { customers: customers.items, sites: sites.items, timeZones: TIME_ZONES };
}

const IntentSchema = z.object({ intent: z.enum(["customer", "site"]) });
type ActionResult = { ok: boolean; message: string; intent?: string; errors?: FieldErrors };

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:manage");
  const form = await request.formData();
  const intent = IntentSchema.safeParse(Object.fromEntries(form));
  if (!intent.success) return data<ActionResult>({ ok: false, message: "Unknown action." }, { status: 400 });
  const ctx = { organisationId: membership.organisation.id, actor: membership.user.id };
  try {
    if (intent.data.intent === "customer") {
      const parsed = parseForm(CustomerInputSchema, form);
      if (!parsed.ok) return data<ActionResult>({ ok: false, intent: "customer", message: "Check the customer's name.", errors: parsed.errors }, { status: 400 });
      const row = await addCustomer(getDb(), { ...ctx, input: parsed.data });
      return data<ActionResult>({ ok: true, message: `${row.name} added. Add its first site next.` });
    }
    const parsed = parseForm(SiteInputSchema, form);
    if (!parsed.ok) return data<ActionResult>({ ok: false, intent: "site", message: "Check the site's fields.", errors: parsed.errors }, { status: 400 });
    const row = await addSite(getDb(), { ...ctx, input: parsed.data });
    return data<ActionResult>({ ok: true, message: `${row.name} added.` });
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

export default function Customers({ loaderData, actionData }: Route.ComponentProps) {
  const { customers, sites, timeZones } = loaderData;
  const busy = useNavigation().state === "submitting";
  return (
    <>
      <PageHeader title="Customers & sites" description="The companies that run your machines, and their plants. A site's time zone is used for its local times." />
      <div className="grid gap-8 px-5 py-6 sm:px-8 lg:grid-cols-[1fr_20rem]">
        <div className="space-y-3">
          {actionData ? <Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice> : null}
          {customers.length === 0 ? (
            <p className="rounded-xl border border-dashed border-rule bg-white px-5 py-6 text-sm text-ink-soft">No customers yet. Add the first company that runs your machines; its sites follow.</p>
          ) : (
            customers.map((c) => (
              <section key={c.id} className="rounded-xl border border-rule bg-white">
                <h2 className="flex items-baseline justify-between border-b border-rule px-4 py-2 font-semibold">{c.name}<span className="text-xs font-normal text-ink-faint tabular">{c.siteCount} {c.siteCount === 1 ? "site" : "sites"}</span></h2>
                <ul className="divide-y divide-rule text-sm">
                  {sites.filter((s) => s.customerId === c.id).map((s) => (
                    <li key={s.id} className="flex justify-between px-4 py-2"><span>{s.name} <span className="text-xs text-ink-faint">{s.timeZone}</span></span><span className="tabular text-ink-soft">{s.machineCount} machines</span></li>
                  ))}
                </ul>
              </section>
            ))
          )}
        </div>
        <div className="space-y-6">
          <Form method="post" className="space-y-3 rounded-xl border border-rule bg-white p-4" noValidate>
            <h2 className="font-semibold">Add a customer</h2>
            <input type="hidden" name="intent" value="customer" />
            <Field label="Name" name="name" required error={actionData?.intent === "customer" ? actionData.errors?.name : undefined} help="The company's name as your team knows it." />
            <Button disabled={busy}>Add customer</Button>
          </Form>
          {customers.length ? (
            <Form method="post" className="space-y-3 rounded-xl border border-rule bg-white p-4" noValidate>
              <h2 className="font-semibold">Add a site</h2>
              <input type="hidden" name="intent" value="site" />
              <SelectField label="Customer" name="customerId">{customers.map((c) => <option key={c.id} value={c.id}>{c.name}</option>)}</SelectField>
              <Field label="Name" name="name" required error={actionData?.intent === "site" ? actionData.errors?.name : undefined} help="The plant or works." />
              <SelectField label="Time zone" name="timeZone" defaultValue="UTC" error={actionData?.intent === "site" ? actionData.errors?.timeZone : undefined} help="IANA zone of the site.">
                <option value="UTC">UTC</option>
                {timeZones.map((tz) => <option key={tz} value={tz}>{tz}</option>)}
              </SelectField>
              <Button disabled={busy}>Add site</Button>
            </Form>
          ) : null}
        </div>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Customers & sites · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
