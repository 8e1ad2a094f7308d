import type { ReactNode } from "react";
import { Link } from "react-router";
import { Wordmark } from "./ui/logo";

/** The narrow single-column frame of the sign-in, sign-up and reset pages. */
export function AuthFrame({ title, subtitle, children, footer }: { title: string; subtitle?: ReactNode; children: ReactNode; footer?: ReactNode }) {
  return (
    <main className="flex min-h-dvh flex-col items-center px-5 py-12 sm:py-20">
      <Link to="/" aria-label="Flyball home">
        <Wordmark />
      </Link>
      <div className="mt-8 w-full max-w-sm rounded-xl border border-rule bg-white p-6 shadow-sm sm:p-8">
        <h1 className="text-xl font-semibold tracking-tight">{title}</h1>
        {subtitle ? <p className="mt-1.5 text-sm text-ink-soft">{subtitle}</p> : null}
        <div className="mt-6">{children}</div>
      </div>
      {footer ? <div className="mt-6 text-sm text-ink-soft">{footer}</div> : null}
    </main>
  );
}
