import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import { requireCapability, requireCapableMember, requireMembership } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { actionFailure } from "~/.server/http/errors";
import { ChangeRoleSchema, changeMemberRole, InviteSchema, inviteMember, listTeam, removeMember, resendInvitation, revokeInvitation } from "~/.server/members/team";
import { PageHeader } from "~/components/org-shell";
import { Button } from "~/components/ui/button";
import { Field, SelectField } from "~/components/ui/field";
import { Notice } from "~/components/ui/notice";
import { can, canAssignRole, canRemoveMember, isRole, ROLE_LABELS, ROLES } from "~/lib/access/capabilities";
import { parseForm } from "~/lib/forms";
import type { Route } from "./+types/team";

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "team:read");
  const team = await listTeam(getDb(), { organisationId: membership.organisation.id });
  const manage = can(membership.role, "members:manage");
  return {
    me: { memberId: membership.memberId, role: membership.role },
    members: team.members,
    // Pending invitations carry e-mail addresses: only people who manage members see them.
    invitations: manage ? team.invitations : [],
  };
}

const IntentSchema = z.object({ intent: z.enum(["invite", "resend", "revoke", "change-role", "remove", "leave"]) });
const IdSchema = z.object({ id: z.string().min(1) });

type ActionResult = { ok: boolean; message: string; errors?: Record<string, string[] | undefined> };

function result(ok: boolean, message: string, status = 200, errors?: ActionResult["errors"]) {
  return data<ActionResult>({ ok, message, errors }, { status });
}

export async function action({ request, params }: Route.ActionArgs) {
  const membership = await requireMembership(request, params.slug);
  const form = await request.formData();
  const intent = IntentSchema.safeParse(Object.fromEntries(form));
  if (!intent.success) return result(false, "Unknown action.", 400);
  // Leaving is the one change a member makes without member management.
  if (intent.data.intent !== "leave") requireCapability(membership, "members:manage");
  const db = getDb();
  try {
    switch (intent.data.intent) {
      case "invite": {
        const parsed = parseForm(InviteSchema, form);
        if (!parsed.ok) return result(false, "Check the invitation.", 400, parsed.errors);
        const { delivery } = await inviteMember(db, membership, parsed.data, request.headers);
        return delivery.sent
          ? result(true, `Invitation sent to ${parsed.data.email}.`)
          : result(false, `The invitation was saved but the e-mail was not sent: ${delivery.reason} Use “Resend” when the problem is fixed.`, 502);
      }
      case "resend": {
        const parsed = parseForm(IdSchema, form);
        if (!parsed.ok) return result(false, "No invitation given.", 400);
        const delivery = await resendInvitation(db, membership, parsed.data.id);
        return delivery.sent ? result(true, "Invitation sent again.") : result(false, `The e-mail was not sent: ${delivery.reason}`, 502);
      }
      case "revoke": {
        const parsed = parseForm(IdSchema, form);
        if (!parsed.ok) return result(false, "No invitation given.", 400);
        await revokeInvitation(db, membership, parsed.data.id);
        return result(true, "Invitation revoked.");
      }
      case "change-role": {
        const parsed = parseForm(ChangeRoleSchema, form);
        if (!parsed.ok) return result(false, "Choose a valid role.", 400, parsed.errors);
        await changeMemberRole(db, membership, parsed.data);
        return result(true, `Role changed to ${ROLE_LABELS[parsed.data.role]}.`);
      }
      case "remove": {
        const parsed = parseForm(IdSchema, form);
        if (!parsed.ok) return result(false, "No member given.", 400);
        await removeMember(db, membership, parsed.data.id);
        return result(true, "Member removed.");
      }
      case "leave": {
        await removeMember(db, membership, membership.memberId);
        return result(true, "You left the organisation.");
      }
    }
  } catch (error) {
    return actionFailure<ActionResult>(error);
  }
}

const dateFormat = new Intl.DateTimeFormat("en-GB", { day: "numeric", month: "short", year: "numeric" });

export default function Team({ loaderData, actionData }: Route.ComponentProps) {
  const { me, members, invitations } = loaderData;
  const manage = can(me.role, "members:manage");
  const busy = useNavigation().state === "submitting";
  return (
    <>
      <PageHeader title="Team" description="Who works in this organisation and what each role may do." />
      <div className="space-y-8 px-5 py-6 sm:px-8">
        {actionData ? <Notice tone={actionData.ok ? "success" : "error"}>{actionData.message}</Notice> : null}

        <section aria-labelledby="members-heading">
          <div className="flex items-baseline justify-between">
            <h2 id="members-heading" className="font-semibold">Members</h2>
            <span className="text-xs text-ink-faint tabular">{members.length} {members.length === 1 ? "person" : "people"}</span>
          </div>
          <div className="mt-3 overflow-hidden rounded-xl border border-rule bg-white">
            <table className="w-full text-sm">
              <thead className="sticky top-0 bg-paper text-left text-xs uppercase tracking-wide text-ink-faint">
                <tr>
                  <th className="px-4 py-2 font-medium">Name</th>
                  <th className="hidden px-4 py-2 font-medium sm:table-cell">E-mail</th>
                  <th className="px-4 py-2 font-medium">Role</th>
                  <th className="hidden px-4 py-2 text-right font-medium md:table-cell">Joined</th>
                  {manage ? <th className="px-4 py-2 text-right font-medium"><span className="sr-only">Actions</span></th> : null}
                </tr>
              </thead>
              <tbody className="divide-y divide-rule">
                {members.map((m) => {
                  const editable = manage && m.id !== me.memberId && isRole(m.role) && canAssignRole(me.role, m.role, m.role);
                  return (
                    <tr key={m.id}>
                      <td className="px-4 py-2.5">
                        <span className="font-medium">{m.name}</span>
                        {m.id === me.memberId ? <span className="ml-1.5 text-xs text-ink-faint">(you)</span> : null}
                        <span className="block truncate text-xs text-ink-faint sm:hidden">{m.email}</span>
                      </td>
                      <td className="hidden px-4 py-2.5 text-ink-soft sm:table-cell">{m.email}</td>
                      <td className="px-4 py-2.5">
                        {editable ? (
                          <Form method="post" className="flex flex-wrap items-center gap-2">
                            <input type="hidden" name="intent" value="change-role" />
                            <input type="hidden" name="memberId" value={m.id} />
                            <label className="sr-only" htmlFor={`role-${m.id}`}>Role of {m.name}</label>
                            <select id={`role-${m.id}`} name="role" defaultValue={m.role} className="rounded-md border border-rule-strong bg-white px-2 py-1 text-sm">
                              {ROLES.filter((r) => canAssignRole(me.role, m.role, r)).map((r) => (
                                <option key={r} value={r}>{ROLE_LABELS[r]}</option>
                              ))}
                            </select>
                            <Button variant="secondary" className="px-2.5 py-1" disabled={busy}>Save</Button>
                          </Form>
                        ) : (
                          <span>{isRole(m.role) ? ROLE_LABELS[m.role] : m.role}</span>
                        )}
                      </td>
                      <td className="hidden px-4 py-2.5 text-right text-ink-soft tabular md:table-cell">{dateFormat.format(new Date(m.joinedAt))}</td>
                      {manage ? (
                        <td className="px-4 py-2.5 text-right">
                          {m.id !== me.memberId && isRole(m.role) && canRemoveMember(me.role, m.role) ? (
                            <Form method="post" onSubmit={(e) => { if (!confirm(`Remove ${m.name} from the organisation?`)) e.preventDefault(); }}>
                              <input type="hidden" name="intent" value="remove" />
                              <input type="hidden" name="id" value={m.id} />
                              <Button variant="danger" className="px-2.5 py-1" disabled={busy}>Remove</Button>
                            </Form>
                          ) : null}
                        </td>
                      ) : null}
                    </tr>
                  );
                })}
              </tbody>
            </table>
          </div>
          <Form method="post" className="mt-3" onSubmit={(e) => { if (!confirm("Leave this organisation?")) e.preventDefault(); }}>
            <input type="hidden" name="intent" value="leave" />
            <button className="text-sm text-ink-soft hover:text-act">Leave this organisation</button>
          </Form>
        </section>

        {manage ? (
          <section aria-labelledby="invite-heading" className="grid gap-8 lg:grid-cols-[22rem_1fr]">
            <div>
              <h2 id="invite-heading" className="font-semibold">Invite a colleague</h2>
              <Form method="post" className="mt-3 space-y-4 rounded-xl border border-rule bg-white p-5" noValidate>
                <input type="hidden" name="intent" value="invite" />
                <Field label="E-mail" name="email" type="email" required error={actionData?.errors?.email} help="They receive a link to join." />
                <SelectField label="Role" name="role" defaultValue="engineer" error={actionData?.errors?.role} help="Site managers see only the sites assigned to them.">
                  {ROLES.filter((r) => canAssignRole(me.role, "viewer", r)).map((r) => (
                    <option key={r} value={r}>{ROLE_LABELS[r]}</option>
                  ))}
                </SelectField>
                <Button type="submit" disabled={busy}>{busy ? "Sending…" : "Send invitation"}</Button>
              </Form>
            </div>
            <div>
              <h2 className="font-semibold">Pending invitations</h2>
              {invitations.length === 0 ? (
                <p className="mt-3 rounded-xl border border-dashed border-rule bg-white px-5 py-6 text-sm text-ink-soft">No invitations are waiting. People you invite appear here until they accept.</p>
              ) : (
                <ul className="mt-3 divide-y divide-rule rounded-xl border border-rule bg-white">
                  {invitations.map((inv) => (
                    <li key={inv.id} className="flex flex-wrap items-center justify-between gap-3 px-4 py-3 text-sm">
                      <span className="min-w-0">
                        <span className="block truncate font-medium">{inv.email}</span>
                        <span className="block text-xs text-ink-faint">{isRole(inv.role) ? ROLE_LABELS[inv.role] : inv.role} · expires {dateFormat.format(new Date(inv.expiresAt))}</span>
                      </span>
                      <span className="flex gap-2">
                        <Form method="post"><input type="hidden" name="intent" value="resend" /><input type="hidden" name="id" value={inv.id} /><Button variant="secondary" className="px-2.5 py-1" disabled={busy}>Resend</Button></Form>
                        <Form method="post"><input type="hidden" name="intent" value="revoke" /><input type="hidden" name="id" value={inv.id} /><Button variant="danger" className="px-2.5 py-1" disabled={busy}>Revoke</Button></Form>
                      </span>
                    </li>
                  ))}
                </ul>
              )}
            </div>
          </section>
        ) : null}
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Team · Flyball" }];
export { ErrorBoundary } from "~/components/route-error";
