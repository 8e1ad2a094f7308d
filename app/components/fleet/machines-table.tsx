// The machines table: TanStack Table in manual mode (the server sorts, filters and pages);
// every change goes into the URL so a view can be shared.
import { createColumnHelper, rowSortingFeature, tableFeatures, useTable, type SortingState } from "@tanstack/react-table";
import { Link, useSearchParams } from "react-router";
import type { HealthBand } from "~/lib/health";
import { formatAgo } from "./format";
import { HealthBadge } from "./health-badge";
import { SortHeaderCell } from "~/components/ui/sort-header-cell";

export type MachineRow = {
  id: string;
  serial: string;
  status: string;
  firmware: string | null;
  lastSeenAt: string | null;
  model: { id: string; name: string };
  site: { id: string; name: string };
  customer: { id: string; name: string };
  loopCount: number;
  health: { band: HealthBand; score: number | null };
  enrolment: "enrolled" | "revoked" | "not_enrolled";
};

const features = tableFeatures({ rowSortingFeature });
const helper = createColumnHelper<typeof features, MachineRow>();

const ENROLMENT: Record<MachineRow["enrolment"], string> = { enrolled: "Enrolled", revoked: "Key revoked", not_enrolled: "Not enrolled" };

function columns(slug: string) {
  return helper.columns([
    helper.accessor("serial", {
      id: "serial",
      header: "Serial",
      cell: (info) => (
        <Link to={`/o/${slug}/machines/${info.row.original.id}`} className="font-medium text-accent hover:underline">
          {info.getValue()}
        </Link>
      ),
    }),
    helper.accessor((row) => row.health.band, {
      id: "health",
      header: "Health",
      cell: (info) => <HealthBadge band={info.row.original.health.band} score={info.row.original.health.score} />,
    }),
    helper.accessor((row) => row.customer.name, { id: "customer", header: "Customer" }),
    helper.accessor((row) => row.site.name, { id: "site", header: "Site" }),
    helper.accessor((row) => row.model.name, { id: "model", header: "Model" }),
    helper.accessor("firmware", { id: "firmware", header: "Firmware", cell: (info) => <span className="tabular">{info.getValue() ?? "–"}</span> }),
    helper.accessor("enrolment", {
      id: "enrolment",
      header: "Device",
      enableSorting: false,
      cell: (info) => (
        <span className={info.getValue() === "enrolled" ? "text-ink-soft" : "text-watch"}>{ENROLMENT[info.getValue()]}</span>
      ),
    }),
    helper.accessor("lastSeenAt", {
      id: "lastSeen",
      header: "Last seen",
      cell: (info) => <span className="tabular text-ink-soft">{formatAgo(info.getValue())}</span>,
    }),
    helper.accessor("status", {
      id: "status",
      header: "Status",
      cell: (info) => (info.getValue() === "active" ? <span className="text-ink-soft">In service</span> : <span className="text-ink-faint">Decommissioned</span>),
    }),
  ]);
}

export function MachinesTable({ slug, rows, sort, dir }: { slug: string; rows: MachineRow[]; sort: string; dir: "asc" | "desc" }) {
  const [params, setParams] = useSearchParams();
  const sorting: SortingState = [{ id: sort, desc: dir === "desc" }];
  const table = useTable({
    features,
    columns: columns(slug),
    data: rows,
    getRowId: (row) => row.id,
    manualSorting: true,
    enableSortingRemoval: false,
    state: { sorting },
    onSortingChange: (updater) => {
      const next = typeof updater === "function" ? updater(sorting) : updater;
      const first = next[0];
      const copy = new URLSearchParams(params);
      if (first) {
        copy.set("sort", first.id);
        copy.set("dir", first.desc ? "desc" : "asc");
      }
      copy.delete("page");
      setParams(copy, { preventScrollReset: true });
    },
  });

  return (
    <div role="region" tabIndex={0} aria-label="Machines" className="max-h-[70vh] overflow-auto rounded-xl border border-rule bg-white">
      <table className="w-full min-w-[56rem] text-sm">
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
            <tr key={row.id} className="hover:bg-paper/60">
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
  );
}
