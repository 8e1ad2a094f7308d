import {
  createColumnHelper,
  createSortedRowModel,
  rowSortingFeature,
  sortFn_alphanumeric,
  sortFn_basic,
  tableFeatures,
  useTable,
  type SortingState,
} from "@tanstack/react-table";
import { useMemo, useState } from "react";
import type { ProposalRow } from "~/lib/compute/bench";
import { formatGain, formatNumber, formatShare, formatTime } from "./format";
import { RiskBadge } from "./risk-badge";
import type { Units } from "./settings-panel";

export type GainForm = "standard" | "parallel";

const features = tableFeatures({
  rowSortingFeature,
  sortedRowModel: createSortedRowModel(),
  sortFns: { alphanumeric: sortFn_alphanumeric, basic: sortFn_basic },
});
const helper = createColumnHelper<typeof features, ProposalRow>();

const RISK_RANK = { ok: 0, risky: 1, unstable: 2 } as const;
const finiteOrUndefined = (v: number | null) => (v === null || Number.isNaN(v) ? undefined : v);

function numberColumn(
  id: string,
  header: string,
  unit: string | undefined,
  get: (row: ProposalRow) => number | null,
  format: (v: number | null) => string,
) {
  return helper.accessor((row) => finiteOrUndefined(get(row)), {
    id,
    header: unit ? `${header}|${unit}` : header,
    sortFn: "basic",
    sortDescFirst: false,
    sortUndefined: "last",
    cell: (info) => <span className="tabular">{format(info.getValue() ?? null)}</span>,
    meta: { numeric: true },
  });
}

function buildColumns(form: GainForm, units: Units) {
  const perValue = `${units.output}/${units.value}`;
  const gains =
    form === "standard"
      ? [
          numberColumn("kc", "Kc", perValue, (r) => r.standard.kc, formatGain),
          numberColumn("ti", "Ti", "s", (r) => r.standard.ti, formatGain),
          numberColumn("td", "Td", "s", (r) => r.standard.td, formatGain),
        ]
      : [
          numberColumn("kp", "kp", perValue, (r) => r.parallel.kp, formatGain),
          numberColumn("ki", "ki", `${perValue}/s`, (r) => r.parallel.ki, formatGain),
          numberColumn("kd", "kd", `${perValue}·s`, (r) => r.parallel.kd, formatGain),
        ];
  return helper.columns([
    helper.accessor((row) => RISK_RANK[row.risk.level], {
      id: "check",
      header: "Check",
      sortFn: "basic",
      sortDescFirst: false,
      cell: (info) => <RiskBadge risk={info.row.original.risk} />,
    }),
    helper.accessor("ruleLabel", { id: "rule", header: "Rule", sortFn: "alphanumeric" }),
    helper.accessor("kind", { id: "kind", header: "Kind", sortFn: "alphanumeric" }),
    ...gains,
    numberColumn("gm", "GM", undefined, (r) => r.gainMargin, (v) => formatNumber(v, 3)),
    numberColumn("pm", "PM", "°", (r) => r.phaseMargin, (v) => formatNumber(v, 3)),
    numberColumn("ms", "Ms", undefined, (r) => r.peakSensitivity, (v) => formatNumber(v, 3)),
    numberColumn("overshoot", "Overshoot", "%", (r) => r.overshootPercent, (v) => formatNumber(v === null ? null : Math.max(0, v), 3)),
    numberColumn("settling", "Settling", "s", (r) => r.settlingTime, formatTime),
    numberColumn("iae", "IAE", `${units.value}·s`, (r) => r.iae, (v) => formatNumber(v, 3)),
    numberColumn("saturated", "Saturated", "%", (r) => r.saturatedFraction, formatShare),
  ]);
}

const HEADER_TITLES: Record<string, string> = {
  gm: "Gain margin of the sampled loop (factor)",
  pm: "Phase margin of the sampled loop",
  ms: "Peak sensitivity Ms = max |1/(1 + L)|",
  overshoot: "Overshoot after the set-point change",
  settling: "2 % settling time after the set-point change",
  iae: "Integrated absolute error over both steps",
  saturated: "Share of samples with the output at a limit",
  check: "Risky: Ms above 2 or phase margin under 30°",
};

/** Every proposal side by side, sortable; a radio picks the one to try. */
export function ProposalTable({
  rows,
  form,
  units,
  selectedId,
  onSelect,
}: {
  rows: ProposalRow[];
  form: GainForm;
  units: Units;
  selectedId: string | null;
  onSelect: (row: ProposalRow) => void;
}) {
  const columns = useMemo(() => buildColumns(form, units), [form, units]);
  const [sorting, setSorting] = useState<SortingState>([]);
  const table = useTable({ features, columns, data: rows, state: { sorting }, onSortingChange: setSorting, getRowId: (row) => row.id });

  return (
    <div className="max-h-[32rem] overflow-auto rounded-md border border-rule bg-white" role="region" aria-label="Tuning proposals" tabIndex={0}>
      <table className="w-full border-collapse text-sm">
        <thead>
          {table.getHeaderGroups().map((group) => (
            <tr key={group.id}>
              <th scope="col" className="sticky top-0 z-10 border-b border-rule bg-white px-1.5 py-2 text-left align-bottom text-xs font-medium text-ink-soft">
                <span className="flex flex-col">
                  <span>Use</span>
                  <span aria-hidden="true">{"\u00a0"}</span>
                </span>
              </th>
              {group.headers.map((header) => {
                const [label, unit] = String(header.column.columnDef.header).split("|");
                const numeric = Boolean((header.column.columnDef.meta as { numeric?: boolean } | undefined)?.numeric);
                const sorted = header.column.getIsSorted();
                return (
                  <th
                    key={header.id}
                    scope="col"
                    aria-sort={sorted === "asc" ? "ascending" : sorted === "desc" ? "descending" : undefined}
                    title={HEADER_TITLES[header.column.id]}
                    className={`sticky top-0 z-10 whitespace-nowrap border-b border-rule bg-white px-1.5 py-2 align-bottom text-xs font-medium text-ink-soft ${numeric ? "text-right" : "text-left"}`}
                  >
                    <button
                      type="button"
                      onClick={header.column.getToggleSortingHandler()}
                      className={`inline-flex items-end gap-1 hover:text-ink ${numeric ? "flex-row-reverse" : ""}`}
                    >
                      <span aria-hidden="true" className="w-2.5 text-ink-faint">
                        {sorted === "asc" ? "▲" : sorted === "desc" ? "▼" : ""}
                      </span>
                      <span className={`flex flex-col ${numeric ? "items-end" : "items-start"}`}>
                        <span>{label}</span>
                        <span className="font-normal text-ink-faint">{unit ?? "\u00a0"}</span>
                      </span>
                    </button>
                  </th>
                );
              })}
            </tr>
          ))}
        </thead>
        <tbody>
          {table.getRowModel().rows.map((row) => {
            const selected = row.id === selectedId;
            return (
              <tr
                key={row.id}
                onClick={() => onSelect(row.original)}
                className={`cursor-pointer border-b border-rule/70 last:border-b-0 ${selected ? "bg-accent-wash" : "hover:bg-paper"}`}
              >
                <td className="px-1.5 py-1.5">
                  <input
                    type="radio"
                    name="proposal"
                    checked={selected}
                    onChange={() => onSelect(row.original)}
                    aria-label={`Use ${row.original.ruleLabel} ${row.original.kind}`}
                    className="accent-[var(--color-accent)]"
                  />
                </td>
                {row.getAllCells().map((cell) => {
                  const numeric = Boolean((cell.column.columnDef.meta as { numeric?: boolean } | undefined)?.numeric);
                  return (
                    <td key={cell.id} className={`whitespace-nowrap px-1.5 py-1.5 ${numeric ? "text-right" : ""} ${cell.column.id === "rule" ? "font-medium" : ""}`}>
                      <table.FlexRender cell={cell} />
                    </td>
                  );
                })}
              </tr>
            );
          })}
        </tbody>
      </table>
    </div>
  );
}
