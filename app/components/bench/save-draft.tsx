import { useEffect, useState } from "react";
import { Link, useFetcher, useNavigate, useParams } from "react-router";
import type { LoopScore } from "~/lib/compute/bench";
import { toParallelGains, type FopdtModel, type PidGains } from "~/lib/control";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { formatGain } from "./format";

export type BenchTemplate = {
  id: string;
  key: string;
  name: string;
  unit: string;
  modelName: string;
  samplePeriodS: number;
  envelope: { kp: [number, number]; ki: [number, number]; kd: [number, number] };
  drafts: number;
};

type SaveResult = { ok: true; id: string; version: number; templateKey: string } | { ok: false; message: string };

/** The gains outside a template's safety envelope, in words (empty when they fit). */
function envelopeProblems(template: BenchTemplate, gains: PidGains): string[] {
  const parallel = toParallelGains(gains);
  return (["kp", "ki", "kd"] as const).flatMap((name) => {
    const [min, max] = template.envelope[name];
    const value = parallel[name];
    return value < min || value > max ? [`${name} ${formatGain(value)} is outside ${formatGain(min)}…${formatGain(max)}`] : [];
  });
}

/** Save the gains on the bench as a draft gain set of a loop template (versioned, audited). */
export function SaveDraft({
  templates,
  gains,
  filterN,
  origin,
}: {
  templates: BenchTemplate[];
  gains: PidGains | null;
  filterN: number | null;
  origin: { rule: string | null; controller: string | null; model: FopdtModel | null; score: LoopScore | null };
}) {
  const fetcher = useFetcher<SaveResult>();
  const [templateId, setTemplateId] = useState("");
  const [note, setNote] = useState("");
  const template = templates.find((t) => t.id === templateId);
  const problems = template && gains ? envelopeProblems(template, gains) : [];
  const busy = fetcher.state !== "idle";
  const navigate = useNavigate();
  const { slug } = useParams();
  const saved = fetcher.state === "idle" && fetcher.data?.ok ? fetcher.data : null;
  // A saved draft is proposed from its own page: go there.
  useEffect(() => {
    if (saved) navigate(`/o/${slug}/gain-sets/${saved.id}`);
  }, [saved, slug, navigate]);

  if (templates.length === 0) {
    return <p className="text-xs text-ink-faint">Add a machine model with loop templates to save these gains as a draft gain set.</p>;
  }

  function save() {
    if (!gains || !template) return;
    const score = origin.score;
    const draft = {
      templateId: template.id,
      gains,
      filterN,
      origin: {
        rule: origin.rule,
        controller: origin.controller,
        model: origin.model ? { gain: origin.model.gain, timeConstant: origin.model.timeConstant, deadTime: origin.model.deadTime } : null,
        figures: score
          ? {
              gainMargin: score.gainMargin,
              phaseMargin: score.phaseMargin,
              peakSensitivity: score.peakSensitivity !== null && Number.isFinite(score.peakSensitivity) ? score.peakSensitivity : null,
              overshootPercent: score.overshootPercent,
              settlingTime: score.settlingTime,
              iae: score.iae,
              saturatedFraction: score.saturatedFraction,
            }
          : {},
      },
      note,
    };
    fetcher.submit({ draft: JSON.stringify(draft) }, { method: "post" });
  }

  const result = fetcher.state === "idle" ? fetcher.data : undefined;
  return (
    <div className="w-full space-y-2">
      <div className="flex flex-wrap items-end gap-2">
        <label className="min-w-0 flex-1 text-xs font-medium text-ink sm:max-w-xs">
          Loop template
          <select
            value={templateId}
            onChange={(e) => setTemplateId(e.target.value)}
            className="mt-1 block w-full rounded-md border border-rule bg-white px-2.5 py-1.5 text-sm font-normal"
          >
            <option value="">Choose a loop…</option>
            {templates.map((t) => (
              <option key={t.id} value={t.id}>
                {t.modelName} · {t.name} ({t.key})
              </option>
            ))}
          </select>
        </label>
        <label className="min-w-0 flex-1 text-xs font-medium text-ink sm:max-w-xs">
          Note
          <input
            value={note}
            onChange={(e) => setNote(e.target.value)}
            maxLength={500}
            placeholder="Why these gains"
            className="mt-1 block w-full rounded-md border border-rule bg-white px-2.5 py-1.5 text-sm font-normal"
          />
        </label>
        <Button type="button" variant="secondary" onClick={save} disabled={!gains || !template || problems.length > 0 || busy}>
          {busy ? "Saving…" : "Save as draft gain set"}
        </Button>
      </div>
      {template ? (
        <p className="text-xs text-ink-faint">
          Sample period of this loop {formatGain(template.samplePeriodS)} s; {template.drafts} gain set{template.drafts === 1 ? "" : "s"} saved for it so far. A draft reaches
          no machine: it must be proposed, approved by a second engineer and released first.
        </p>
      ) : null}
      {problems.length ? <Notice tone="error" title="Outside the loop's safety envelope">{problems.join("; ")}.</Notice> : null}
      {result?.ok ? (
        <Notice tone="success" title={`Saved draft v${result.version} for ${result.templateKey}`}>
          <Link to={`/o/${slug}/gain-sets/${result.id}`} className="link-in-text">Open it to propose it</Link>
        </Notice>
      ) : null}
      {result && !result.ok ? <Notice tone="error" title="Not saved">{result.message}</Notice> : null}
    </div>
  );
}
