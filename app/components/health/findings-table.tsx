// The findings table: TanStack Table in manual mode (the server sorts, filters and pages; the
// URL is the truth), with row selection for bulk acknowledgement when the role may triage.
import { useState } from "react";
import {
  createColumnHelper,
  rowSelectionFeature,
  rowSortingFeature,
  tableFeatures,
  useTable,
  type RowSelectionState,
  type SortingState,
} from "@tanstack/react-table";
import { Form, Link, useNavigation, useSearchParams } from "react-router";
import { formatAgo, formatDateTime } from "~/components/fleet/format";
import { SeverityBadge } from "~/components/health/overview-panels";
import { KIND_LABELS, STATE_LABELS } from "~/components/health/words";
import { Button } from "~/components/ui/button";
import type { FindingItem, FindingState } from "~/lib/health/api-types";
import { SortHeaderCell } from "~/components/ui/sort-header-cell";

const features = tableFeatures({ rowSortingFeature, rowSelectionFeature });
const helper = createColumnHelper<typeof features, FindingItem>();

const STATE_CLASS: Record<FindingState, string> = { open: "text-ink font-medium", acknowledged: "text-ink-soft", resolved: "text-ink-faint" };

function columns(slug: string, selectable: boolean) {
  const base = `/o/${slug}`;
  return helper.columns([
    ...(selectable
      ? [
          helper.display({
            id: "select",
            header: ({ table }) => (
              <input
                type="checkbox"
                aria-label="Select every finding on this page"
                checked={table.getIsAllRowsSelected()}
                ref={(el) => { if (el) el.indeterminate = table.getIsSomeRowsSelected() && !table.getIsAllRowsSelected(); }}
                onChange={table.getToggleAllRowsSelectedHandler()}
                className="h-4 w-4 accent-[var(--color-accent)]"
              />
            ),
            cell: ({ row }) => (
              <input
                type="checkbox"
                aria-label={`Select finding ${KIND_LABELS[row.original.kind]} on ${row.original.machineSerial} ${row.original.loopKey}`}
                checked={row.getIsSelected()}
                disabled={!row.getCanSelect()}
                onChange={row.getToggleSelectedHandler()}
                className="h-4 w-4 accent-[var(--color-accent)]"
              />
            ),
          }),
        ]
      : []),
    helper.accessor("severity", { id: "severity", header: "Severity", cell: (info) => <SeverityBadge severity={info.getValue()} /> }),
    helper.accessor("kind", {
      id: "kind",
      header: "Finding",
      cell: (info) => (
        <Link to={`${base}/findings/${info.row.original.id}`} className="font-medium text-accent hover:underline">
          {KIND_LABELS[info.getValue()]}
        </Link>
      ),
    }),
    helper.accessor("machineSerial", {
      id: "machineSerial",
      header: "Machine · loop",
      cell: (info) => (
        <>
          <Link to={`${base}/machines/${info.row.original.machineId}?loop=${info.row.original.loopId}`} className="hover:underline">{info.getValue()}</Link>
          <span className="ml-1.5 font-mono text-xs text-ink-faint">{info.row.original.loopKey}</span>
        </>
      ),
    }),
    helper.accessor("summary", {
      id: "summary",
      header: "What we saw",
      enableSorting: false,
      cell: (info) => <span className="block max-w-[28rem] truncate text-ink-soft" title={info.getValue()}>{info.getValue()}</span>,
    }),
    helper.accessor("state", { id: "state", header: "State", enableSorting: false, cell: (info) => <span className={STATE_CLASS[info.getValue()]}>{STATE_LABELS[info.getValue()]}</span> }),
    helper.accessor("openedAt", { id: "openedAt", header: "Opened", cell: (info) => <span className="tabular text-ink-soft" title={formatDateTime(info.getValue())}>{formatAgo(info.getValue())}</span> }),
    helper.accessor("updatedAt", { id: "updatedAt", header: "Updated", cell: (info) => <span className="tabular text-ink-soft" title={formatDateTime(info.getValue())}>{formatAgo(info.getValue())}</span> }),
  ]);
}

export function FindingsTable({ slug, rows, sort, dir, canTriage }: { slug: string; rows: FindingItem[]; sort: string; dir: "asc" | "desc"; canTriage: boolean }) {
  const [params, setParams] = useSearchParams();
  const [rowSelection, setRowSelection] = useState<RowSelectionState>({});
  const busy = useNavigation().state !== "idle";
  const sorting: SortingState = [{ id: sort, desc: dir === "desc" }];
  const table = useTable({
    features,
    columns: columns(slug, canTriage),
    data: rows,
    getRowId: (row) => row.id,
    manualSorting: true,
    enableSortingRemoval: false,
    enableRowSelection: (row) => row.original.state === "open",
    state: { sorting, rowSelection },
    onRowSelectionChange: (updater) => setRowSelection((old) => (typeof updater === "function" ? updater(old) : updater)),
    onSortingChange: (updater) => {
      const next = typeof updater === "function" ? updater(sorting) : updater;
      const first = next[0];
      const copy = new URLSearchParams(params);
      if (first) {
        copy.set("sort", first.id);
        copy.set("dir", first.desc ? "desc" : "asc");
      }
      copy.delete("page");
      setRowSelection({});
      setParams(copy, { preventScrollReset: true });
    },
  });
  const selected = Object.keys(rowSelection).filter((id) => rowSelection[id] && rows.some((r) => r.id === id));

  return (
    <div className="space-y-2">
      {canTriage ? (
        <Form method="post" className="flex flex-wrap items-end gap-2 rounded-xl border border-rule bg-white px-3 py-2" aria-label="Acknowledge selected findings" onSubmit={() => setRowSelection({})}>
          <input type="hidden" name="intent" value="acknowledge" />
          {selected.map((id) => <input key={id} type="hidden" name="ids" value={id} />)}
          <p className="text-sm text-ink-soft" aria-live="polite">
            <span className="tabular">{selected.length}</span> selected
          </p>
          <label className="flex min-w-48 flex-1 flex-col text-xs text-ink-faint">
            Comment (optional)
            <input name="comment" maxLength={2000} placeholder="e.g. Seen, heater band ordered" className="rounded-md border border-rule-strong bg-white px-2 py-1.5 text-sm text-ink" />
          </label>
          <Button variant="secondary" className="py-1.5 disabled:opacity-50" disabled={busy || selected.length === 0}>Acknowledge selected</Button>
        </Form>
      ) : null}
      <div role="region" tabIndex={0} aria-label="Findings" className="max-h-[70vh] overflow-auto rounded-xl border border-rule bg-white">
        <table className="w-full min-w-[60rem] text-sm">
          <thead className="sticky top-0 z-10 bg-paper text-left text-xs uppercase tracking-wide text-ink-faint shadow-[0_1px_0_var(--color-rule)]">
            {table.getHeaderGroups().map((group) => (
              <tr key={group.id}>
                {group.headers.map((header) => (
                  <SortHeaderCell key={header.id} canSort={header.column.getCanSort()} sorted={header.column.getIsSorted()} onToggle={header.column.getToggleSortingHandler()}>
                    <table.FlexRender header={header} />
                  </SortHeaderCell>
                ))}
              </tr>
            ))}
          </thead>
          <tbody className="divide-y divide-rule">
            {table.getRowModel().rows.map((row) => (
              <tr key={row.id} className={row.getIsSelected() ? "bg-accent-wash" : "hover:bg-paper/60"}>
                {row.getAllCells().map((cell) => (
                  <td key={cell.id} className="whitespace-nowrap px-3 py-1.5">
                    <table.FlexRender cell={cell} />
                  </td>
                ))}
              </tr>
            ))}
          </tbody>
        </table>
      </div>
    </div>
  );
}
