import { Link } from "react-router";
import { buttonClass } from "./ui/button";
import { Wordmark } from "./ui/logo";

const strands = [
  {
    title: "Tune from a step test",
    body: "Upload a step test, fit a plant model, and compare gains from several published tuning rules side by side — margins, peak sensitivity, overshoot and saturation in one table.",
  },
  {
    title: "Prove gains before they ship",
    body: "Simulate the closed loop with your drive's output limits, anti-windup and a load step, in the browser, as you edit. Risky proposals are flagged before a second engineer approves them.",
  },
  {
    title: "Deliver to the fleet in waves",
    body: "Release an approved gain set to a pilot group of machines first, widen when their loops stay healthy, and roll back with one action. Every device verifies what it receives.",
  },
  {
    title: "Hear from loops before customers call",
    body: "Devices post compact performance digests. Flyball spots drift, integrator windup, actuator saturation and oscillation, and shows site managers the health of their own machines.",
  },
];

export function Landing() {
  return (
    <div className="min-h-dvh">
      <header className="mx-auto flex max-w-6xl items-center justify-between px-5 py-5 sm:px-8">
        <Wordmark />
        <nav className="flex items-center gap-2 text-sm sm:gap-4">
          <Link to="/sign-in" className="rounded-md px-3 py-2 font-medium text-ink hover:bg-paper-deep">
            Sign in
          </Link>
          <Link to="/sign-up" className={buttonClass("primary")}>
            Create account
          </Link>
        </nav>
      </header>

      <main>
        <section className="mx-auto max-w-6xl px-5 pb-16 pt-10 sm:px-8 sm:pt-20">
          <p className="text-sm font-semibold uppercase tracking-wider text-accent">For machine builders with PID loops in the field</p>
          <h1 className="mt-4 max-w-3xl text-4xl font-semibold leading-tight tracking-tight sm:text-5xl">
            Keep every deployed control loop tuned, proven and accounted for.
          </h1>
          <p className="mt-6 max-w-2xl text-lg leading-relaxed text-ink-soft">
            Flyball is where an OEM's application engineers turn step tests into gain sets, prove them in simulation, and
            release them to hundreds of machines safely and reversibly — and where their customers' site managers see how
            the loops on their own lines are doing.
          </p>
          <div className="mt-8 flex flex-wrap gap-3">
            <Link to="/sign-up" className={buttonClass("primary", "px-5 py-2.5 text-base")}>
              Start with your fleet
            </Link>
            <Link to="/sign-in" className={buttonClass("secondary", "px-5 py-2.5 text-base")}>
              Sign in
            </Link>
          </div>
        </section>

        <section className="border-y border-rule bg-white">
          <div className="mx-auto grid max-w-6xl gap-px bg-rule sm:grid-cols-2 lg:grid-cols-4">
            {strands.map((strand) => (
              <article key={strand.title} className="bg-white px-5 py-8 sm:px-8">
                <h2 className="text-base font-semibold">{strand.title}</h2>
                <p className="mt-2 text-sm leading-relaxed text-ink-soft">{strand.body}</p>
              </article>
            ))}
          </div>
        </section>

        <section className="mx-auto grid max-w-6xl gap-8 px-5 py-16 sm:px-8 md:grid-cols-3">
          <div>
            <h2 className="font-semibold">Application engineers</h2>
            <p className="mt-2 text-sm leading-relaxed text-ink-soft">Identify, tune, simulate, get a colleague's approval, release, and watch the pilot wave.</p>
          </div>
          <div>
            <h2 className="font-semibold">Site managers</h2>
            <p className="mt-2 text-sm leading-relaxed text-ink-soft">See which loops on your sites need attention and why, acknowledge findings, and ask for a retune.</p>
          </div>
          <div>
            <h2 className="font-semibold">Account owners</h2>
            <p className="mt-2 text-sm leading-relaxed text-ink-soft">Invite the team with the right roles and pay per machine under management.</p>
          </div>
        </section>
      </main>

      <footer className="border-t border-rule">
        <div className="mx-auto max-w-6xl px-5 py-6 text-xs text-ink-faint sm:px-8">
          Named after the flyball governor, the first feedback controller. Tuned gains never replace independent safety functions.
        </div>
      </footer>
    </div>
  );
}
