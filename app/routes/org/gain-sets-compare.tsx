import { useMemo } from "react";
import { data, Link } from "react-router";
import { z } from "zod";
import { requireCapableMember } from "~/.server/auth/guards";
import { getDb } from "~/.server/db/client";
import { getGainSet, listGainSets, type GainSetDetail } from "~/.server/tuning/gain-sets";
import { formatGain, formatNumber, formatTime } from "~/components/bench/format";
import { CHART_COLORS, TimeChart } from "~/components/bench/time-chart";
import { ComparePicker } from "~/components/gain-sets/compare-picker";
import { GainSetStateBadge, STATE_WORDS } from "~/components/gain-sets/state-badge";
import { PageHeader } from "~/components/org-shell";
import { Notice } from "~/components/ui/notice";
import { simulateGainSetResponses } from "~/lib/gain-sets/responses";
import type { Route } from "./+types/gain-sets-compare";

const QuerySchema = z.object({ a: z.uuid("Choose the first gain set."), b: z.uuid("Choose the second gain set.") });

export async function loader({ request, params }: Route.LoaderArgs) {
  const membership = await requireCapableMember(request, params.slug, "registry:read");
  const search = new URL(request.url).searchParams;
  const scope = { organisationId: membership.organisation.id };
  const slug = membership.organisation.slug;
  const all = await listGainSets(getDb(), scope, { page: 1, pageSize: 200 });
  const versions = all.items.map((g) => ({ id: g.id, label: `${g.template.key} v${g.version} (${STATE_WORDS[g.state].toLowerCase()})` }));
  // Without a pair the page asks for one.
  if (!search.has("a") && !search.has("b")) return { pair: null, versions, slug };
  const query = QuerySchema.safeParse(Object.fromEntries(search));
  if (!query.success) throw data({ message: "Choose two gain sets to compare." }, { status: 400 });
  const [a, b] = await Promise.all([getGainSet(getDb(), { ...scope, id: query.data.a }), getGainSet(getDb(), { ...scope, id: query.data.b })]);
  if (!a || !b) throw data({ message: "No such gain set." }, { status: 404 });
  return { pair: { a, b }, versions, slug };
}

const COLORS = { a: CHART_COLORS.output, b: CHART_COLORS.model } as const;

function useResponses(g: GainSetDetail) {
  return useMemo(() => {
    const plant = g.template.referenceModel;
    if (!plant) return null;
    const span = g.template.outputMax - g.template.outputMin;
    return simulateGainSetResponses(
      { gains: g.gains, filterN: g.filterN, setpointWeight: g.setpointWeight, antiWindup: g.antiWindup, trackingTime: g.trackingTime, samplePeriod: g.samplePeriodS },
      plant,
      { setpointStep: 1, loadStep: Number((span * 0.05).toPrecision(2)) || 1 },
    );
  }, [g]);
}

const label = (g: GainSetDetail) => `${g.template.key} v${g.version}`;

export default function ComparePage({ loaderData }: Route.ComponentProps) {
  const { pair, versions, slug } = loaderData;
  const base = `/o/${slug}`;
  if (!pair) {
    return (
      <>
        <PageHeader title="Compare gain sets" crumbs={[{ label: "Gain sets", to: `${base}/gain-sets` }, { label: "Compare" }]} description="Pick two versions: their gains side by side, step and load responses on the reference model, and margins." />
        <div className="px-4 py-5 sm:px-8">
          {versions.length >= 1 ? (
            <ComparePicker action={`${base}/gain-sets/compare`} versions={versions} />
          ) : (
            <p className="text-sm text-ink-soft">There are no gain sets to compare yet. Save some from the <Link to={`${base}/bench`} className="link-in-text">tuning bench</Link>.</p>
          )}
        </div>
      </>
    );
  }
  return <Comparison a={pair.a} b={pair.b} base={base} versions={versions} />;
}

function Comparison({ a, b, base, versions }: { a: GainSetDetail; b: GainSetDetail; base: string; versions: { id: string; label: string }[] }) {
  const ra = useResponses(a);
  const rb = useResponses(b);
  const sameTemplate = a.loopTemplateId === b.loopTemplateId;
  const unit = a.template.unit;

  const rows: { label: string; unit?: string; a: string; b: string }[] = [
    { label: "kp", a: formatGain(a.gains.kp), b: formatGain(b.gains.kp) },
    { label: "ki", unit: "1/s", a: formatGain(a.gains.ki), b: formatGain(b.gains.ki) },
    { label: "kd", unit: "s", a: formatGain(a.gains.kd), b: formatGain(b.gains.kd) },
    { label: "Filter N", a: a.filterN === null ? "10" : formatNumber(a.filterN, 3), b: b.filterN === null ? "10" : formatNumber(b.filterN, 3) },
    { label: "Set-point weight b", a: formatNumber(a.setpointWeight, 3), b: formatNumber(b.setpointWeight, 3) },
    { label: "Anti-windup", a: a.antiWindup.replace("_", "-"), b: b.antiWindup.replace("_", "-") },
    { label: "Sample period", unit: "s", a: formatTime(a.samplePeriodS), b: formatTime(b.samplePeriodS) },
    { label: "Gain margin", a: a.margins ? (a.margins.gainMargin === null ? "∞" : formatNumber(a.margins.gainMargin, 3)) : "–", b: b.margins ? (b.margins.gainMargin === null ? "∞" : formatNumber(b.margins.gainMargin, 3)) : "–" },
    { label: "Phase margin", unit: "°", a: formatNumber(a.margins?.phaseMargin, 3), b: formatNumber(b.margins?.phaseMargin, 3) },
    { label: "Delay margin", unit: "s", a: formatTime(a.margins?.delayMargin), b: formatTime(b.margins?.delayMargin) },
    { label: "Peak sensitivity Ms", a: formatNumber(a.margins?.peakSensitivity, 3), b: formatNumber(b.margins?.peakSensitivity, 3) },
    { label: "Step: overshoot", unit: "%", a: formatNumber(ra?.setpoint?.overshootPercent, 3), b: formatNumber(rb?.setpoint?.overshootPercent, 3) },
    { label: "Step: settling time (2 %)", unit: "s", a: formatTime(ra?.setpoint?.settlingTime), b: formatTime(rb?.setpoint?.settlingTime) },
    { label: "Step: IAE", unit: `${unit}·s`, a: formatNumber(ra?.setpoint?.iae, 3), b: formatNumber(rb?.setpoint?.iae, 3) },
    { label: "Load: peak deviation", unit, a: formatNumber(ra?.load?.peakDeviation, 3), b: formatNumber(rb?.load?.peakDeviation, 3) },
    { label: "Load: IAE", unit: `${unit}·s`, a: formatNumber(ra?.load?.iae, 3), b: formatNumber(rb?.load?.iae, 3) },
  ];

  const series = (kind: "setpoint" | "load") =>
    [
      { g: a, r: ra?.[kind], key: "a" as const },
      { g: b, r: rb?.[kind], key: "b" as const },
    ].flatMap(({ g, r, key }) => (r ? [{ key, label: label(g), t: r.t, v: r.y, color: COLORS[key], emphasis: key === "b" }] : []));

  return (
    <>
      <PageHeader
        title={`Compare ${label(a)} and ${label(b)}`}
        crumbs={[{ label: "Gain sets", to: `${base}/gain-sets` }, { label: "Compare" }]}
        description="Gains side by side, and how each loop answers a set-point step and a load step on the loop template's reference model."
      />
      <div className="space-y-5 px-4 py-5 sm:px-8">
        {!sameTemplate ? <Notice tone="caution" title="Different loop templates">These gain sets belong to different loops; each is simulated on its own template's reference model.</Notice> : null}
        <div role="region" aria-label="Gains and margins side by side" tabIndex={0} className="overflow-x-auto rounded-md border border-rule bg-white">
          <table className="w-full text-sm tabular">
            <caption className="sr-only">Gains, settings and margins of both gain sets</caption>
            <thead className="bg-paper text-left text-xs text-ink-faint">
              <tr>
                <th scope="col" className="px-3 py-2 font-medium">Figure</th>
                {[a, b].map((g, i) => (
                  <th key={g.id} scope="col" className="px-3 py-2 text-right font-medium">
                    <span className="inline-flex items-center gap-1.5">
                      <svg width="18" height="6" aria-hidden="true"><line x1="0" x2="18" y1="3" y2="3" stroke={i === 0 ? COLORS.a : COLORS.b} strokeWidth={i === 0 ? 1.5 : 2} /></svg>
                      <Link to={`${base}/gain-sets/${g.id}`} className="text-accent hover:underline">{label(g)}</Link>
                      <GainSetStateBadge state={g.state} />
                    </span>
                  </th>
                ))}
              </tr>
            </thead>
            <tbody className="divide-y divide-rule">
              {rows.map((r) => (
                <tr key={r.label} className={r.a !== r.b ? "bg-accent-wash/40" : ""}>
                  <th scope="row" className="px-3 py-1 text-left font-normal text-ink-soft">{r.label}{r.a !== r.b ? <span className="sr-only"> (differs)</span> : null}</th>
                  <td className="px-3 py-1 text-right">{r.a}{r.unit && r.a !== "–" ? <span className="text-ink-faint"> {r.unit}</span> : null}</td>
                  <td className="px-3 py-1 text-right">{r.b}{r.unit && r.b !== "–" ? <span className="text-ink-faint"> {r.unit}</span> : null}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
        <p className="text-xs text-ink-faint">Rows that differ are shaded. Margins are those of the sampled loop on the reference model.</p>

        {ra && rb ? (
          <div className="grid gap-6 xl:grid-cols-2">
            <section className="rounded-md border border-rule bg-white px-4 py-3">
              <TimeChart
                title={`Set-point step of 1 ${unit}`}
                series={series("setpoint")}
                limits={[{ key: "sp", label: "Set point", value: 1, color: CHART_COLORS.setpoint }]}
                yLabel="Process value (deviation)"
                yUnit={unit}
              />
            </section>
            <section className="rounded-md border border-rule bg-white px-4 py-3">
              <TimeChart
                title={`Load step of ${formatNumber(ra.loadStep, 3)} ${a.template.outputUnit} at the plant input`}
                series={series("load")}
                limits={[{ key: "zero", label: "Set point", value: 0, color: CHART_COLORS.setpoint }]}
                yLabel="Process value (deviation)"
                yUnit={unit}
              />
            </section>
          </div>
        ) : (
          <Notice tone="info" title="No responses to show">The loop template has no reference model to simulate on. Add one to its template to compare responses.</Notice>
        )}
        <p className="text-xs text-ink-faint">
          Linear responses around the operating point: the plant starts at rest and the controller's output limits are not applied. Reference model of {a.template.key}:{" "}
          {a.template.referenceModel ? describePlant(a.template.referenceModel) : "none"}.
        </p>
        <section aria-labelledby="other-pair" className="rounded-md border border-rule bg-white px-4 py-3">
          <h2 id="other-pair" className="text-sm font-semibold text-ink">Compare another pair</h2>
          <ComparePicker action={`${base}/gain-sets/compare`} versions={versions} a={a.id} b={b.id} />
        </section>
      </div>
    </>
  );
}

function describePlant(p: NonNullable<GainSetDetail["template"]["referenceModel"]>): string {
  if (p.type === "fopdt") return `first order plus dead time, K ${formatGain(p.gain)}, τ ${formatTime(p.timeConstant)} s, θ ${formatTime(p.deadTime)} s`;
  if (p.type === "sopdt") return `second order plus dead time, K ${formatGain(p.gain)}, τ₁ ${formatTime(p.timeConstant)} s, τ₂ ${formatTime(p.timeConstant2)} s, θ ${formatTime(p.deadTime)} s`;
  return `integrator plus dead time, k ${formatGain(p.gain)} /s, θ ${formatTime(p.deadTime)} s`;
}

export const meta: Route.MetaFunction = () => [{ title: "Compare gain sets · Flyball" }];

export { ErrorBoundary } from "~/components/route-error";
