import { data, Form, Link, redirect, useNavigation } from "react-router";
import { requireUser } from "~/.server/auth/guards";
import { createOrganisation, NewOrganisationSchema } from "~/.server/members/organisations";
import { AuthFrame } from "~/components/auth-frame";
import { Button } from "~/components/ui/button";
import { Field } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { parseForm } from "~/lib/forms";
import type { Route } from "./+types/new-organisation";

export async function loader({ request }: Route.LoaderArgs) {
  await requireUser(request);
  return null;
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireUser(request);
  const parsed = parseForm(NewOrganisationSchema, await request.formData());
  if (!parsed.ok) return data({ errors: parsed.errors }, { status: 400 });
  const result = await createOrganisation(parsed.data, { headers: request.headers, userId: user.id });
  if (!result.ok) return data({ errors: result.errors }, { status: 400 });
  throw redirect(`/o/${result.slug}`);
}

export default function NewOrganisation({ actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors = actionData?.errors as Record<string, string[] | undefined> | undefined;
  return (
    <AuthFrame title="New organisation" subtitle="One machine builder: its fleet, team and gain sets. You become its owner." footer={<Link to="/" className="link-in-text">Back</Link>}>
      <Form method="post" className="space-y-4" noValidate>
        {errors?.form ? <Notice tone="error">{errors.form[0]}</Notice> : null}
        <Field label="Name" name="name" required error={errors?.name} help="Usually the company name, e.g. Corvid Thermal Machines." />
        <Field label="Address" name="slug" required error={errors?.slug} help="Lower-case letters, digits and hyphens; appears in links as /o/address." />
        <Button type="submit" disabled={busy}>{busy ? "Creating…" : "Create organisation"}</Button>
      </Form>
    </AuthFrame>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "New organisation · Flyball" }];
