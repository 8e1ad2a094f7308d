import { useState, type ReactNode } from "react";
import { Form, Link, NavLink, useNavigate } from "react-router";
import { can, ROLE_LABELS, type Capability, type Role } from "~/lib/access/capabilities";
import { LogoMark } from "./ui/logo";

export type ShellOrganisation = { name: string; slug: string };

type NavItem = { to: string; label: string; capability: Capability; end?: boolean };

// Pages appear here as they exist; each is hidden from roles that cannot use it.
export const NAV_ITEMS: NavItem[] = [
  { to: "", label: "Overview", capability: "fleet:read", end: true },
  { to: "machines", label: "Machines", capability: "fleet:read" },
  { to: "findings", label: "Findings", capability: "fleet:read" },
  { to: "retune-requests", label: "Retune requests", capability: "fleet:read" },
  { to: "customers", label: "Customers & sites", capability: "registry:manage" },
  { to: "models", label: "Models & loops", capability: "registry:manage" },
  { to: "bench", label: "Tuning bench", capability: "tuning:use" },
  { to: "gain-sets", label: "Gain sets", capability: "registry:read" },
  { to: "alerts", label: "Alert e-mails", capability: "fleet:read" },
  { to: "releases", label: "Releases", capability: "registry:read" },
  { to: "team", label: "Team", capability: "team:read" },
  { to: "developer", label: "Developer", capability: "registry:manage" },
  { to: "audit", label: "Audit log", capability: "audit:read" },
  { to: "billing", label: "Billing", capability: "billing:manage" },
];

export function OrgShell({
  organisation,
  organisations,
  role,
  user,
  navItems = NAV_ITEMS,
  children,
}: {
  organisation: ShellOrganisation;
  organisations: ShellOrganisation[];
  role: Role;
  user: { name: string; email: string };
  navItems?: NavItem[];
  children: ReactNode;
}) {
  const [open, setOpen] = useState(false);
  const navigate = useNavigate();
  const base = `/o/${organisation.slug}`;
  const items = navItems.filter((item) => can(role, item.capability));

  const nav = (
    <nav aria-label="Organisation" className="flex flex-col gap-0.5">
      {items.map((item) => (
        <NavLink
          key={item.to}
          to={item.to ? `${base}/${item.to}` : base}
          end={item.end}
          onClick={() => setOpen(false)}
          className={({ isActive }) =>
            `rounded-md px-3 py-1.5 text-sm ${isActive ? "bg-accent-wash font-medium text-accent-strong" : "text-ink-soft hover:bg-paper-deep hover:text-ink"}`
          }
        >
          {item.label}
        </NavLink>
      ))}
    </nav>
  );

  const switcher = (
    <div>
      <label htmlFor="org-switcher" className="sr-only">
        Organisation
      </label>
      <select
        id="org-switcher"
        value={organisation.slug}
        onChange={(event) => navigate(event.target.value === "__new" ? "/organisations/new" : `/o/${event.target.value}`)}
        className="w-full truncate rounded-md border border-rule bg-white px-2.5 py-1.5 text-sm font-medium"
      >
        {organisations.map((org) => (
          <option key={org.slug} value={org.slug}>
            {org.name}
          </option>
        ))}
        <option value="__new">+ New organisation…</option>
      </select>
    </div>
  );

  const account = (
    <div className="border-t border-rule pt-3 text-xs text-ink-faint">
      <p className="truncate font-medium text-ink-soft">{user.name}</p>
      <p className="truncate">{user.email}</p>
      <p className="mt-0.5">{ROLE_LABELS[role]}</p>
      <Form method="post" action="/sign-out" className="mt-2">
        <button className="text-accent hover:underline">Sign out</button>
      </Form>
    </div>
  );

  return (
    <div className="min-h-dvh lg:flex">
      <aside className="hidden w-60 shrink-0 flex-col gap-5 border-r border-rule bg-white px-4 py-5 lg:sticky lg:top-0 lg:flex lg:h-dvh">
        <Link to="/" className="flex items-center gap-2 px-1 font-semibold tracking-tight">
          <LogoMark className="h-5 w-5 text-accent" /> Flyball
        </Link>
        {switcher}
        <div className="flex-1 overflow-y-auto">{nav}</div>
        {account}
      </aside>

      <header className="sticky top-0 z-20 flex items-center justify-between border-b border-rule bg-white px-4 py-3 lg:hidden">
        <Link to="/" className="flex items-center gap-2 font-semibold tracking-tight">
          <LogoMark className="h-5 w-5 text-accent" /> Flyball
        </Link>
        <button
          type="button"
          aria-expanded={open}
          aria-controls="mobile-nav"
          onClick={() => setOpen((v) => !v)}
          className="rounded-md border border-rule px-3 py-1.5 text-sm font-medium"
        >
          {open ? "Close" : "Menu"}
        </button>
      </header>
      {open ? (
        <div id="mobile-nav" className="space-y-4 border-b border-rule bg-white px-4 py-4 lg:hidden">
          {switcher}
          {nav}
          {account}
        </div>
      ) : null}

      <div className="min-w-0 flex-1">{children}</div>
    </div>
  );
}

/** Page title with the page's main action at the top right, and optional breadcrumbs. */
export function PageHeader({
  title,
  description,
  action,
  crumbs,
}: {
  title: string;
  description?: ReactNode;
  action?: ReactNode;
  crumbs?: { label: string; to?: string }[];
}) {
  return (
    <div className="border-b border-rule bg-white px-5 py-5 sm:px-8">
      {crumbs?.length ? (
        <nav aria-label="Breadcrumb" className="mb-1.5 text-xs text-ink-faint">
          {crumbs.map((crumb, i) => (
            <span key={crumb.label}>
              {i > 0 ? <span className="px-1.5">/</span> : null}
              {crumb.to ? (
                <Link to={crumb.to} className="hover:text-ink">
                  {crumb.label}
                </Link>
              ) : (
                crumb.label
              )}
            </span>
          ))}
        </nav>
      ) : null}
      <div className="flex flex-wrap items-start justify-between gap-3">
        <div className="min-w-0">
          <h1 className="text-xl font-semibold tracking-tight">{title}</h1>
          {description ? <p className="mt-1 max-w-2xl text-sm text-ink-soft">{description}</p> : null}
        </div>
        {action ? <div className="flex shrink-0 items-center gap-2">{action}</div> : null}
      </div>
    </div>
  );
}
