// The caution shown on every screen where a change reaches live machines: approving a gain
// set, starting a release, rolling one back (DESIGN.md section 7). Words and icon, never
// colour alone; role="note" so assistive technology reads it as an aside to the action.
import { useId } from "react";

export type LiveChangeStep = "approve" | "release" | "rollback";

const HEADLINES: Record<LiveChangeStep, string> = {
  approve: "Approving lets these gains be released to running machines",
  release: "This release sends new gains to running machines",
  rollback: "Rolling back sends the previous gains to running machines",
};

export function LiveChangeCaution({ step, className = "" }: { step: LiveChangeStep; className?: string }) {
  const titleId = useId();
  return (
    <aside role="note" aria-labelledby={titleId} data-testid="live-change-caution" className={`rounded-md border-l-4 border-watch bg-watch/10 px-4 py-3 text-sm text-ink ${className}`}>
      <p id={titleId} className="flex items-center gap-2 font-semibold">
        <svg aria-hidden="true" viewBox="0 0 20 20" className="h-4 w-4 shrink-0 text-watch" fill="none" stroke="currentColor" strokeWidth="1.8">
          <path d="M10 2.5 18.5 17h-17z" strokeLinejoin="round" />
          <path d="M10 8v4.2M10 14.6v.2" strokeLinecap="round" />
        </svg>
        <span>Caution: {HEADLINES[step]}</span>
      </p>
      <ul className="mt-1.5 list-disc space-y-0.5 pl-9 text-ink-soft">
        <li>New gains change how a machine moves, heats or presses.</li>
        <li>Apply them only with the machine in a safe state.</li>
        <li>Keep safety functions independent of the tuned loop.</li>
        <li>Follow local codes, functional-safety practice and qualified personnel.</li>
      </ul>
    </aside>
  );
}
