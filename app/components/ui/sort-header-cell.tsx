// A column header of a server-sorted table: a button that toggles the sort, the direction as an
// arrow, and `aria-sort` for screen readers. The caller renders the header's content as children.
import type { ReactNode } from "react";

export function SortHeaderCell({ canSort, sorted, onToggle, children }: { canSort: boolean; sorted: false | "asc" | "desc"; onToggle: ((event: unknown) => void) | undefined; children: ReactNode }) {
  return (
    <th scope="col" aria-sort={sorted === "asc" ? "ascending" : sorted === "desc" ? "descending" : undefined} className="px-3 py-2 font-medium">
      {canSort ? (
        <button type="button" onClick={onToggle} className="inline-flex items-center gap-1 uppercase tracking-wide hover:text-ink">
          {children}
          <span aria-hidden="true" className="w-2 text-ink-soft">{sorted === "asc" ? "↑" : sorted === "desc" ? "↓" : ""}</span>
        </button>
      ) : (
        children
      )}
    </th>
  );
}
