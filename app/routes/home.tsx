import { Form, Link } from "react-router";
import { getSessionUser } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { listMemberships } from "~/.server/members/organisations";
import { Landing } from "~/components/landing";
import { buttonClass } from "~/components/ui/button";
import { Wordmark } from "~/components/ui/logo";
import { ROLE_LABELS } from "~/lib/access/capabilities";
import type { Route } from "./+types/home";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await getSessionUser(request);
  if (!user) return { user: null, organisations: [] };
  return { user, organisations: await listMemberships(getDb(), { userId: user.id }) };
}

export default function Home({ loaderData }: Route.ComponentProps) {
  const { user, organisations } = loaderData;
  if (!user) return <Landing />;
  return (
    <div className="min-h-dvh">
      <header className="mx-auto flex max-w-4xl items-center justify-between px-5 py-5">
        <Wordmark />
        <Form method="post" action="/sign-out">
          <button className="text-sm text-ink-soft hover:text-ink">Sign out</button>
        </Form>
      </header>
      <main className="mx-auto max-w-4xl px-5 pb-16 pt-6">
        <div className="flex flex-wrap items-end justify-between gap-4">
          <div>
            <h1 className="text-2xl font-semibold tracking-tight">Your organisations</h1>
            <p className="mt-1 text-sm text-ink-soft">Signed in as {user.email}</p>
          </div>
          <Link to="/organisations/new" className={buttonClass("primary")}>
            New organisation
          </Link>
        </div>
        {organisations.length === 0 ? (
          <div className="mt-8 rounded-xl border border-dashed border-rule bg-white px-6 py-10 text-center">
            <h2 className="font-semibold">You are not in an organisation yet</h2>
            <p className="mx-auto mt-2 max-w-md text-sm text-ink-soft">
              An organisation holds one machine builder's fleet, team and gain sets. Create one, or open the invitation a colleague sent you.
            </p>
            <Link to="/organisations/new" className={buttonClass("primary", "mt-5")}>
              Create an organisation
            </Link>
          </div>
        ) : (
          <ul className="mt-6 divide-y divide-rule overflow-hidden rounded-xl border border-rule bg-white">
            {organisations.map((org) => (
              <li key={org.id}>
                <Link to={`/o/${org.slug}`} className="flex items-center justify-between gap-4 px-5 py-4 hover:bg-paper">
                  <span>
                    <span className="block font-medium">{org.name}</span>
                    <span className="block text-xs text-ink-faint">/o/{org.slug}</span>
                  </span>
                  <span className="rounded-full bg-paper-deep px-2.5 py-0.5 text-xs font-medium text-ink-soft">{ROLE_LABELS[org.role]}</span>
                </Link>
              </li>
            ))}
          </ul>
        )}
      </main>
    </div>
  );
}

export const meta: Route.MetaFunction = () => [
  { title: "Flyball · tuning and delivery of PID gains for machine fleets" },
  { name: "description", content: "Tune loops from step tests, prove gains in simulation, release them to fleets in waves and watch loop health." },
];
