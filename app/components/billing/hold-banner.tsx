import { Link } from "react-router";
import { holdMessage, type HoldReason } from "~/lib/billing/rules";

/** On every organisation page while new machines and releases are refused: why, and who can fix it. */
export function HoldBanner({ hold, slug, canManage, ownerName }: { hold: HoldReason; slug: string; canManage: boolean; ownerName: string | null }) {
  return (
    <div role="status" className="border-b border-act/30 bg-act/5 px-5 py-2.5 text-sm text-ink sm:px-8">
      <span className="font-semibold text-act">
        <span aria-hidden="true">✕ </span>New machines and releases are paused.
      </span>{" "}
      {holdMessage(hold)}{" "}
      {canManage ? (
        <Link to={`/o/${slug}/billing`} className="link-in-text font-medium">Fix it on the billing page</Link>
      ) : (
        <>Ask the organisation's owner{ownerName ? ` (${ownerName})` : ""} to update billing.</>
      )}
    </div>
  );
}
