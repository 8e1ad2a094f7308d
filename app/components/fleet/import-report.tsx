// What a bulk import did: the machines registered with their one-time enrolment codes, and
// the rows that were skipped with the reason for each.
import { Link } from "react-router";
import { formatDateTime } from "~/components/fleet/format";
import { buttonClass } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { enrolmentCodesCsv, type ImportMode, type RejectedRow } from "~/lib/fleet/machine-import";

export type ImportReportView = {
  mode: ImportMode;
  outcome: "imported" | "refused" | "checked" | "nothing";
  rowCount: number;
  imported: { row: number; serial: string; machineId: string; enrolmentCode: string; enrolmentCodeExpiresAt: string }[];
  rejected: RejectedRow[];
  ready: { row: number; serial: string; model: string; site: string }[];
};

const plural = (n: number, one: string, many = `${one}s`) => `${n.toLocaleString("en-GB")} ${n === 1 ? one : many}`;

const th = "px-3 py-2 font-medium";
const problemOf = (r: RejectedRow) => r.message.replace(/^Row \d+: /, "");
const td = "whitespace-nowrap px-3 py-1.5";

function TableFrame({ caption, count, children }: { caption: string; count: string; children: React.ReactNode }) {
  return (
    <section className="space-y-2">
      <div className="flex items-baseline justify-between gap-3">
        <h2 className="text-sm font-semibold text-ink">{caption}</h2>
        <span className="tabular shrink-0 text-xs text-ink-faint">{count}</span>
      </div>
      <div role="region" tabIndex={0} aria-label={caption} className="max-h-[60vh] overflow-auto rounded-xl border border-rule bg-white">{children}</div>
    </section>
  );
}

// On a phone the last column folds under the serial instead of scrolling out of sight.
function Head({ columns }: { columns: { label: string; right?: boolean; wide?: boolean }[] }) {
  return (
    <thead className="sticky top-0 z-10 bg-paper text-left text-xs uppercase tracking-wide text-ink-faint shadow-[0_1px_0_var(--color-rule)]">
      <tr>
        {columns.map((c) => (
          <th key={c.label} scope="col" className={`${th} ${c.right ? "text-right" : ""} ${c.wide ? "hidden sm:table-cell" : ""}`}>
            {c.label}
          </th>
        ))}
      </tr>
    </thead>
  );
}

function Summary({ report }: { report: ImportReportView }) {
  const bad = new Set(report.rejected.map((r) => r.row)).size;
  const rows = plural(report.rowCount, "row");
  switch (report.outcome) {
    case "imported":
      return (
        <Notice tone="success" title={`${plural(report.imported.length, "machine")} imported`}>
          {bad ? `${bad.toLocaleString("en-GB")} of ${rows} skipped; see why below. ` : `All ${rows} of the file are registered. `}
          Copy or download the enrolment codes now: they are shown only on this page, once.
        </Notice>
      );
    case "refused":
      return (
        <Notice tone="error" title="Nothing was imported">
          {bad.toLocaleString("en-GB")} of {rows} {bad === 1 ? "has a problem" : "have problems"}. Fix {bad === 1 ? "it" : "them"} and upload the file again, or choose “Import the valid rows” to skip {bad === 1 ? "it" : "them"}.
        </Notice>
      );
    case "checked":
      return (
        <Notice tone={bad ? "caution" : "info"} title="Checked; nothing was imported">
          {report.ready.length.toLocaleString("en-GB")} of {rows} can be imported{bad ? `; ${plural(bad, "row")} ${bad === 1 ? "has a problem" : "have problems"}` : ""}.
        </Notice>
      );
    case "nothing":
      return (
        <Notice tone="error" title="Nothing was imported">
          None of the {rows} can be imported; see why below.
        </Notice>
      );
  }
}

export function ImportReport({ report, slug }: { report: ImportReportView; slug: string }) {
  const csv = report.imported.length ? enrolmentCodesCsv(report.imported) : "";
  return (
    <div className="space-y-5" aria-live="polite">
      <Summary report={report} />

      {report.imported.length ? (
        <TableFrame caption="Registered machines and their enrolment codes" count={plural(report.imported.length, "machine")}>
          <table className="w-full text-sm">
            <Head columns={[{ label: "Row", right: true }, { label: "Serial" }, { label: "Enrolment code", wide: true }]} />
            <tbody className="divide-y divide-rule">
              {report.imported.map((m) => (
                <tr key={m.machineId}>
                  <td className={`${td} tabular text-right text-ink-faint`}>{m.row}</td>
                  <td className={td}>
                    <Link to={`/o/${slug}/machines/${m.machineId}`} className="font-medium text-accent hover:underline">
                      {m.serial}
                    </Link>
                    <code className="mt-0.5 block select-all font-mono text-[0.8125rem] text-ink sm:hidden">{m.enrolmentCode}</code>
                  </td>
                  <td className={`${td} hidden sm:table-cell`}>
                    <code className="select-all font-mono text-[0.8125rem] text-ink">{m.enrolmentCode}</code>
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </TableFrame>
      ) : null}
      {report.imported.length ? (
        <div className="flex flex-wrap items-center gap-3">
          {/* A data: link works with and without JavaScript; the codes never go back to the server. */}
          <a href={`data:text/csv;charset=utf-8,${encodeURIComponent(csv)}`} download="flyball-enrolment-codes.csv" className={buttonClass("primary")}>
            Download codes as CSV
          </a>
          <p className="text-xs text-ink-faint">
            serial,enrolmentCode for each machine. Each code works once and expires {formatDateTime(report.imported[0]!.enrolmentCodeExpiresAt)}.
          </p>
        </div>
      ) : null}

      {report.rejected.length ? (
        <TableFrame caption={report.outcome === "imported" ? "Skipped rows" : "Rows with problems"} count={plural(report.rejected.length, "row")}>
          <table className="w-full text-sm">
            <Head columns={[{ label: "Row", right: true }, { label: "Serial" }, { label: "Problem", wide: true }]} />
            <tbody className="divide-y divide-rule">
              {report.rejected.map((r) => (
                <tr key={`${r.row}-${r.code}`} className="align-top">
                  <td className={`${td} tabular text-right text-ink-faint`}>{r.row}</td>
                  <td className="px-3 py-1.5">
                    <span className="font-medium">{r.serial ?? "–"}</span>
                    <span className="mt-0.5 block text-act sm:hidden">{problemOf(r)}</span>
                  </td>
                  <td className="hidden min-w-[16rem] px-3 py-1.5 text-act sm:table-cell">{problemOf(r)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </TableFrame>
      ) : null}

      {report.outcome === "checked" && report.ready.length ? (
        <TableFrame caption="Rows ready to import" count={plural(report.ready.length, "row")}>
          <table className="w-full text-sm">
            <Head columns={[{ label: "Row", right: true }, { label: "Serial" }, { label: "Model", wide: true }, { label: "Site", wide: true }]} />
            <tbody className="divide-y divide-rule">
              {report.ready.map((r) => (
                <tr key={r.row}>
                  <td className={`${td} tabular text-right text-ink-faint`}>{r.row}</td>
                  <td className={td}>
                    <span className="font-medium">{r.serial}</span>
                    <span className="mt-0.5 block text-xs text-ink-soft sm:hidden">{r.model} · {r.site}</span>
                  </td>
                  <td className={`${td} hidden sm:table-cell`}>{r.model}</td>
                  <td className={`${td} hidden sm:table-cell`}>{r.site}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </TableFrame>
      ) : null}
    </div>
  );
}
