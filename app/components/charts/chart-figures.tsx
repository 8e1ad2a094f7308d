// The numbers a chart draws, as a table under it (WCAG 1.1.1): readers who cannot see the plot,
// and those who want exact figures, open it. Long series are shown at evenly spaced samples.

/** At most `count` indices into a series of `length`, evenly spaced, first and last included. */
export function evenlySpacedIndices(length: number, count: number): number[] {
  if (length <= count) return Array.from({ length }, (_, i) => i);
  return [...new Set(Array.from({ length: count }, (_, i) => Math.round((i * (length - 1)) / (count - 1))))];
}

/** The index of the sample nearest to `t` in ascending `times`. */
export function nearestIndex(times: readonly number[], t: number): number {
  let lo = 0;
  let hi = times.length - 1;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (times[mid] < t) lo = mid + 1;
    else hi = mid;
  }
  return lo > 0 && Math.abs(times[lo - 1] - t) <= Math.abs(times[lo] - t) ? lo - 1 : lo;
}

export function ChartFigures({ title, summary, headers, rows }: { title: string; summary?: string; headers: string[]; rows: string[][] }) {
  return (
    <details className="mt-1 text-xs text-ink-soft">
      <summary className="w-fit cursor-pointer text-accent hover:underline">
        Figures<span className="sr-only"> of {title}</span>
      </summary>
      {summary ? <p className="mt-1">{summary}</p> : null}
      <div role="region" tabIndex={0} aria-label={`${title}: figures`} className="mt-1 max-h-64 overflow-auto rounded-md border border-rule bg-white">
        <table className="w-full tabular">
          <caption className="sr-only">{title}</caption>
          <thead className="sticky top-0 bg-paper text-left text-ink-faint">
            <tr>
              {headers.map((h, c) => (
                <th key={h} scope="col" className={`px-2 py-1 font-medium ${c === 0 ? "" : "text-right"}`}>{h}</th>
              ))}
            </tr>
          </thead>
          <tbody className="divide-y divide-rule">
            {rows.map((cells, r) => (
              <tr key={r}>
                {cells.map((cell, c) => (
                  <td key={c} className={`px-2 py-0.5 ${c === 0 ? "text-ink-soft" : "text-right text-ink"}`}>{cell}</td>
                ))}
              </tr>
            ))}
          </tbody>
        </table>
      </div>
    </details>
  );
}
