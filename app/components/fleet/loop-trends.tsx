// Trends of one loop's IAE, saturation share and clamped-integrator share, fetched in the
// browser from the management API through TanStack Query.
import { keepPreviousData, useQuery } from "@tanstack/react-query";
import { useState } from "react";
import { TrendChart } from "~/components/charts/trend-chart";

export type TrendLoop = { id: string; key: string; name: string; unit: string; thresholds: { saturationWatch: number; clampWatch: number } };

export const RANGES = [
  { id: "6h", label: "6 hours", ms: 6 * 3600_000, bucket: null },
  { id: "24h", label: "24 hours", ms: 86_400_000, bucket: 300 },
  { id: "7d", label: "7 days", ms: 7 * 86_400_000, bucket: 1800 },
  { id: "30d", label: "30 days", ms: 30 * 86_400_000, bucket: 7200 },
] as const;

type DigestPoint = { windowStart: string; iae: number; satHighFrac: number; satLowFrac: number; intClampFrac: number };

function Trends({ slug, loops, initialLoopId }: { slug: string; loops: TrendLoop[]; initialLoopId?: string }) {
  const [loopId, setLoopId] = useState(initialLoopId ?? loops[0]?.id ?? "");
  const [rangeId, setRangeId] = useState<(typeof RANGES)[number]["id"]>("24h");
  const range = RANGES.find((r) => r.id === rangeId)!;
  const loop = loops.find((l) => l.id === loopId) ?? loops[0];
  const query = useQuery({
    queryKey: ["loop-digests", slug, loopId, rangeId],
    enabled: Boolean(loopId),
    placeholderData: keepPreviousData,
    refetchInterval: 60_000,
    queryFn: async () => {
      const to = new Date();
      const from = new Date(to.getTime() - range.ms);
      const search = new URLSearchParams({ from: from.toISOString(), to: to.toISOString(), pageSize: "2000" });
      if (range.bucket) search.set("bucket", String(range.bucket));
      const response = await fetch(`/api/v1/o/${slug}/loops/${loopId}/digests?${search}`, { headers: { accept: "application/json" } });
      if (!response.ok) throw new Error(`The digests could not be loaded (${response.status}).`);
      return (await response.json()) as { items: DigestPoint[]; total: number };
    },
  });
  if (!loop) return null;
  const items = query.data?.items ?? [];
  const t = (d: DigestPoint) => new Date(d.windowStart).getTime();
  const perMinute = range.bucket ? 60 / range.bucket : 1;
  return (
    <section aria-labelledby="trends-heading" className="rounded-xl border border-rule bg-white p-4">
      <div className="flex flex-wrap items-end justify-between gap-3">
        <h2 id="trends-heading" className="font-semibold">Trends</h2>
        <div className="flex flex-wrap gap-2 text-sm">
          <label className="flex flex-col text-xs text-ink-faint">
            Loop
            <select value={loopId} onChange={(e) => setLoopId(e.target.value)} className="rounded-md border border-rule-strong bg-white px-2 py-1 text-sm text-ink">
              {loops.map((l) => <option key={l.id} value={l.id}>{l.name}</option>)}
            </select>
          </label>
          <div role="group" aria-label="Time range" className="flex items-end gap-1">
            {RANGES.map((r) => (
              <button key={r.id} type="button" aria-pressed={r.id === rangeId} onClick={() => setRangeId(r.id)}
                className={`rounded-md border px-2 py-1 text-xs ${r.id === rangeId ? "border-accent bg-accent-wash text-accent-strong" : "border-rule text-ink-soft hover:bg-paper-deep"}`}>
                {r.label}
              </button>
            ))}
          </div>
        </div>
      </div>
      <p className="mt-1 text-xs text-ink-faint" aria-live="polite">
        {query.isError ? (query.error as Error).message : query.isFetching && !query.data ? "Loading digests…" : `${query.data?.total ?? 0} ${range.bucket ? "time buckets" : "digest windows"}`}
      </p>
      <div className="mt-3 grid gap-5 lg:grid-cols-3">
        <TrendChart title={range.bucket ? "IAE per minute" : "IAE per window"} unit={`${loop.unit}·s`} points={items.map((d) => ({ t: t(d), v: d.iae * (range.bucket ? perMinute : 1) }))} format={(v) => Number(v.toPrecision(3)).toString()} />
        <TrendChart title="Saturated share" unit="%" points={items.map((d) => ({ t: t(d), v: (d.satHighFrac + d.satLowFrac) * 100 }))} threshold={loop.thresholds.saturationWatch * 100} thresholdLabel="watch limit" format={(v) => Math.round(v).toString()} domainMax={10} />
        <TrendChart title="Integrator held share" unit="%" points={items.map((d) => ({ t: t(d), v: d.intClampFrac * 100 }))} threshold={loop.thresholds.clampWatch * 100} thresholdLabel="watch limit" format={(v) => Math.round(v).toString()} domainMax={10} />
      </div>
    </section>
  );
}

export function LoopTrends(props: { slug: string; loops: TrendLoop[]; initialLoopId?: string }) {
  return <Trends key={props.initialLoopId} {...props} />;
}
