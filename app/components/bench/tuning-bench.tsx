import { SaveDraft, type BenchTemplate } from "./save-draft";
import { useCallback, useEffect, useMemo, useRef, useState, type ReactNode } from "react";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import {
  compareProposals,
  EXAMPLE_STEP_TEST,
  estimateTwoPoint,
  generateExampleStepTest,
  modelResponseOnData,
  planScenario,
  simulateBenchLoop,
  suggestSettings,
  toStepTestCsv,
  type BenchSettings,
  type ModelEstimate,
  type ProposalRow,
} from "~/lib/compute/bench";
import { MAX_CSV_BYTES, parseStepTestCsv } from "~/lib/compute/step-test-csv";
import { ControlInputError, describeGainForms, toStandardGains, type FopdtModel } from "~/lib/control";
import { formatGain } from "./format";
import { GainEditor } from "./gain-editor";
import { gainDraftFrom, readGainDraft, type GainDraft } from "./gain-draft";
import { MODEL_SOURCE_LABELS, ModelPicker, ModelSummary, type ModelCandidate, type ModelSource } from "./model-picker";
import { ProposalTable, type GainForm } from "./proposal-table";
import { ResponseCharts, ScoreList } from "./response-panel";
import { draftFromSettings, readSettingsDraft, type SettingsDraft } from "./settings-draft";
import { SettingsPanel, type Units } from "./settings-panel";
import { StepTestDrop, TypedModelForm, UploadStatus, type UploadState } from "./source-panel";
import { CHART_COLORS, TimeChart } from "./time-chart";
import { uploadStepTest } from "./upload-step-test";

type Samples = { t: number[]; u: number[]; y: number[] };
type StepTest = { name: string; samples: Samples; fit: ModelEstimate | "pending"; smith: ModelEstimate; sk: ModelEstimate };

const DEFAULT_UNITS: Units = { value: "PV", output: "%" };
const EXAMPLE_STEP_TEST_UNITS: Units = EXAMPLE_STEP_TEST.units;

/** The value, once it has stopped changing for `delay` ms (compared by a string key). */
function useSettled<T>(value: T, key: string, delay: number): T {
  const [settled, setSettled] = useState({ key, value });
  useEffect(() => {
    if (key === settled.key) return;
    const timer = setTimeout(() => setSettled({ key, value }), delay);
    return () => clearTimeout(timer);
  }, [key, value, delay, settled.key]);
  return settled.value;
}

function describeError(error: unknown): string {
  if (error instanceof ControlInputError) return error.message;
  return error instanceof Error ? error.message : String(error);
}

function Section({ title, aside, children, id }: { title: string; aside?: ReactNode; children: ReactNode; id?: string }) {
  return (
    <section aria-labelledby={id} className="rounded-lg border border-rule bg-white px-4 py-4 sm:px-5">
      <div className="mb-3 flex flex-wrap items-center justify-between gap-x-4 gap-y-2">
        <h2 id={id} className="text-base font-semibold tracking-tight">
          {title}
        </h2>
        {aside}
      </div>
      {children}
    </section>
  );
}

function FormToggle({ value, onChange }: { value: GainForm; onChange: (form: GainForm) => void }) {
  const options: { value: GainForm; label: string }[] = [
    { value: "standard", label: "Standard Kc, Ti, Td" },
    { value: "parallel", label: "Parallel kp, ki, kd" },
  ];
  return (
    <div role="radiogroup" aria-label="Gains shown as" className="inline-flex rounded-md border border-rule bg-paper p-0.5 text-xs">
      {options.map((option) => (
        <button
          key={option.value}
          type="button"
          role="radio"
          aria-checked={value === option.value}
          onClick={() => onChange(option.value)}
          className={`rounded px-2.5 py-1 font-medium ${value === option.value ? "bg-white text-ink shadow-xs ring-1 ring-rule" : "text-ink-soft hover:text-ink"}`}
        >
          {option.label}
        </button>
      ))}
    </div>
  );
}

/** The tuning bench: step test or typed model in, compared proposals and a live closed loop out. */
export function TuningBench({ templates = [] }: { templates?: BenchTemplate[] }) {
  const [units, setUnits] = useState<Units>(DEFAULT_UNITS);
  const [test, setTest] = useState<StepTest | null>(null);
  const [upload, setUpload] = useState<UploadState>({ phase: "idle" });
  const [typed, setTyped] = useState<FopdtModel | null>(null);
  const [typing, setTyping] = useState(false);
  const [source, setSource] = useState<ModelSource>("least-squares");
  const [draft, setDraft] = useState<SettingsDraft | null>(null);
  const [operatingPoint, setOperatingPoint] = useState<BenchSettings["operatingPoint"]>({ output: 0, value: 0 });
  const [gainForm, setGainForm] = useState<GainForm>("standard");
  const [selectedId, setSelectedId] = useState<string | null>(null);
  const [manual, setManual] = useState<GainDraft | null>(null);
  const uploadId = useRef(0);

  const begin = useCallback((model: FopdtModel, samples?: Samples) => {
    const settings = suggestSettings(model, samples);
    setDraft(draftFromSettings(settings));
    setOperatingPoint(settings.operatingPoint);
    setSelectedId(null);
    setManual(null);
  }, []);

  const loadFile = useCallback(
    async (file: File, fileUnits?: Units) => {
      const id = ++uploadId.current;
      if (file.size > MAX_CSV_BYTES) {
        setUpload({ phase: "error", fileName: file.name, message: "The file is larger than 5 MB. Shorten the test or sample it more slowly." });
        return;
      }
      const parsed = parseStepTestCsv(await file.text());
      if (!parsed.ok) {
        setUpload({ phase: "error", fileName: file.name, message: parsed.message });
        return;
      }
      const samples = parsed.samples;
      const next: StepTest = {
        name: file.name,
        samples,
        fit: "pending",
        smith: estimateTwoPoint(samples, "smith"),
        sk: estimateTwoPoint(samples, "sundaresan-krishnaswamy"),
      };
      setTest(next);
      setSource("least-squares");
      setTyping(false);
      // The example brings its own units; a real file after it goes back to neutral ones.
      setUnits(fileUnits ?? ((u) => (u === EXAMPLE_STEP_TEST_UNITS ? DEFAULT_UNITS : u)));
      setDraft(null);
      try {
        const answer = await uploadStepTest(file, file.name, (progress) => {
          if (id !== uploadId.current) return;
          setUpload(progress.phase === "uploading" ? { phase: "uploading", fraction: progress.fraction, fileName: file.name } : { phase: "fitting", fileName: file.name });
        });
        if (id !== uploadId.current) return;
        setTest({ ...next, fit: { ok: true, model: answer.model, fit: answer.fit } });
        setUpload({ phase: "idle" });
        begin(answer.model, samples);
      } catch (error) {
        if (id !== uploadId.current) return;
        const message = describeError(error);
        setUpload({ phase: "error", fileName: file.name, message });
        const fallback = next.smith.ok ? "smith" : next.sk.ok ? "sundaresan-krishnaswamy" : null;
        if (!fallback) {
          setTest(null);
          return;
        }
        setTest({ ...next, fit: { ok: false, message } });
        setSource(fallback);
        const estimate = fallback === "smith" ? next.smith : next.sk;
        if (estimate.ok) begin(estimate.model, samples);
      }
    },
    [begin],
  );

  const loadExample = () => {
    const csv = toStepTestCsv(generateExampleStepTest());
    void loadFile(new File([csv], "example-step-test.csv", { type: "text/csv" }), EXAMPLE_STEP_TEST_UNITS);
  };

  const applyTyped = (model: FopdtModel) => {
    setTyped(model);
    setTyping(false);
    setSource("typed");
    if (test) {
      // Keep the test's operating point: the typed model is compared against the same data.
      const settings = suggestSettings(model, test.samples);
      setDraft(draftFromSettings(settings));
      setOperatingPoint(settings.operatingPoint);
      setSelectedId(null);
      setManual(null);
    } else begin(model);
  };

  const startOver = () => {
    uploadId.current++;
    setTest(null);
    setTyped(null);
    setTyping(false);
    setUpload({ phase: "idle" });
    setDraft(null);
    setUnits(DEFAULT_UNITS);
    setSelectedId(null);
    setManual(null);
  };

  const candidates: ModelCandidate[] = useMemo(() => {
    const list: ModelCandidate[] = [];
    if (test) {
      list.push({ source: "least-squares", estimate: test.fit });
      list.push({ source: "smith", estimate: test.smith });
      list.push({ source: "sundaresan-krishnaswamy", estimate: test.sk });
    }
    if (typed) list.push({ source: "typed", estimate: { ok: true, model: typed, fit: { rmse: Number.NaN, r2: Number.NaN } } });
    return list;
  }, [test, typed]);

  const chosen = candidates.find((c) => c.source === source);
  const model = chosen && chosen.estimate !== "pending" && chosen.estimate.ok ? chosen.estimate.model : null;

  // Settings: field errors at once, computation once typing pauses.
  const read = draft ? readSettingsDraft(draft, operatingPoint) : null;
  const settledRead = useSettled(read, JSON.stringify([draft, operatingPoint]), 150);
  const settings = settledRead?.ok ? settledRead.settings : null;

  const comparison = useMemo((): { rows: ProposalRow[]; error: null } | { rows: null; error: string } | null => {
    if (!model || !settings) return null;
    try {
      return { rows: compareProposals(model, settings), error: null };
    } catch (error) {
      return { rows: null, error: describeError(error) };
    }
  }, [model, settings]);
  const rows = comparison?.rows ?? null;

  const scenario = useMemo(() => {
    if (!model || !settings) return null;
    try {
      return planScenario(model, settings.samplePeriod);
    } catch {
      return null;
    }
  }, [model, settings]);

  // The gains being tried: typed by hand, else the chosen proposal, else the soundest one.
  const selectedRow = useMemo(() => {
    if (!rows?.length) return null;
    const byId = selectedId ? rows.find((r) => r.id === selectedId) : undefined;
    if (byId) return byId;
    const sound = rows.filter((r) => r.risk.level === "ok").sort((a, b) => a.iae - b.iae);
    return sound[0] ?? rows[0];
  }, [rows, selectedId]);
  const shownDraft = manual ?? (selectedRow ? gainDraftFrom(gainForm, selectedRow) : null);
  const gainRead = shownDraft ? readGainDraft(shownDraft) : null;
  const settledGains = useSettled(gainRead, JSON.stringify(shownDraft), manual ? 100 : 0);

  const response = useMemo(() => {
    if (!model || !settings || !settledGains?.ok) return null;
    try {
      return { ok: true as const, value: simulateBenchLoop(model, settledGains.gains, settings) };
    } catch (error) {
      return { ok: false as const, message: describeError(error) };
    }
  }, [model, settings, settledGains]);

  const switchForm = (form: GainForm) => {
    setGainForm(form);
    if (manual) {
      const current = readGainDraft(manual);
      if (current.ok) {
        try {
          setManual(gainDraftFrom(form, describeGainForms(toStandardGains(current.gains))));
        } catch {
          /* A draft that has no form in the other notation stays as typed. */
        }
      }
    }
  };

  const dataOverlay = useMemo(() => (test && model ? modelResponseOnData(model, test.samples) : null), [test, model]);
  const busy = upload.phase === "uploading" || upload.phase === "fitting";
  const hasAnything = Boolean(test || typed);

  if (!hasAnything) {
    return (
      <div className="space-y-4">
        <section className="rounded-lg border border-rule bg-white px-4 py-5 sm:px-6">
          <h2 className="text-base font-semibold">Start from a step test or a model</h2>
          <p className="mt-1 max-w-3xl text-sm text-ink-soft">
            The bench turns an open-loop step test into gains you can defend: it fits a first-order-plus-dead-time model, runs every tuning rule on
            it, scores each proposal on the sampled loop (margins, Ms, a set-point and a load step) and lets you try gains by hand. Everything after
            the fit runs in your browser; nothing is saved or sent to a machine.
          </p>
          <div className="mt-5 grid gap-4 lg:grid-cols-3">
            <div>
              <h3 className="text-sm font-medium">Upload a step test</h3>
              <div className="mt-2">
                <StepTestDrop onFile={(file) => void loadFile(file)} busy={busy} />
              </div>
            </div>
            <div className="border-t border-rule pt-4 lg:border-0 lg:pt-0">
              <h3 className="text-sm font-medium">Type a model</h3>
              <p className="mb-2 text-xs text-ink-faint">K e^(−θs) / (τs + 1), if you already know the process.</p>
              <TypedModelForm units={units} onSubmit={applyTyped} />
            </div>
            <div className="border-t border-rule pt-4 lg:border-0 lg:pt-0">
              <h3 className="text-sm font-medium">Try the example</h3>
              <p className="mt-1 text-sm text-ink-soft">
                An invented heater step test: output from 20 % to 30 % at 20 s, with a little measurement noise. It goes through the same fit as an
                upload.
              </p>
              <Button type="button" variant="secondary" className="mt-3" onClick={loadExample} disabled={busy}>
                Load the example step test
              </Button>
            </div>
          </div>
        </section>
        <UploadStatus state={upload} />
      </div>
    );
  }

  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-center gap-2">
        <StepTestDropCompact onFile={(file) => void loadFile(file)} busy={busy} />
        <Button type="button" variant="secondary" onClick={() => setTyping((v) => !v)} aria-expanded={typing}>
          {typing ? "Close the model form" : typed ? "Change the typed model" : "Type a model"}
        </Button>
        <Button type="button" variant="secondary" onClick={loadExample} disabled={busy}>
          Load the example
        </Button>
        <Button type="button" variant="quiet" onClick={startOver} className="ml-auto">
          Start over
        </Button>
      </div>
      {typing ? (
        <section className="max-w-md rounded-lg border border-rule bg-white px-4 py-4">
          <h2 className="mb-2 text-sm font-semibold">Type a model</h2>
          <TypedModelForm initial={typed ?? model} units={units} onSubmit={applyTyped} submitLabel="Use this model" />
        </section>
      ) : null}
      <UploadStatus state={upload} />

      <Section title={test ? "Step test and models" : "Model"} id="bench-model">
        <div className={test ? "grid gap-5 lg:grid-cols-[minmax(0,1fr)_17rem]" : ""}>
          {test ? (
            <div className="min-w-0 space-y-3">
              <p className="text-xs text-ink-soft">
                <span className="font-medium text-ink">{test.name}</span> · <span className="tabular">{test.samples.t.length.toLocaleString("en")}</span> samples
              </p>
              <TimeChart
                title="Process value"
                yLabel="Process value"
                yUnit={units.value}
                series={[
                  { key: "measured", label: "Measured", t: test.samples.t, v: test.samples.y, color: CHART_COLORS.measured },
                  ...(dataOverlay && model
                    ? [{ key: "model", label: `Model (${MODEL_SOURCE_LABELS[source].toLowerCase()})`, t: test.samples.t, v: dataOverlay, color: CHART_COLORS.model, emphasis: true }]
                    : []),
                ]}
              />
              <TimeChart
                title="Controller output"
                yLabel="Output"
                yUnit={units.output}
                height={150}
                series={[{ key: "u", label: "Output", t: test.samples.t, v: test.samples.u, color: CHART_COLORS.output, emphasis: true }]}
              />
            </div>
          ) : null}
          {candidates.length > 1 || test ? (
            <ModelPicker candidates={candidates} chosen={source} onChoose={(s) => setSource(s)} units={units} />
          ) : typed ? (
            <div className="max-w-sm">
              <p className="mb-2 text-xs text-ink-soft">Typed first-order-plus-dead-time model</p>
              <ModelSummary model={typed} units={units} />
            </div>
          ) : null}
        </div>
      </Section>

      {model && draft ? (
        <>
          <Section title="Loop settings" id="bench-settings">
            <SettingsPanel
              draft={draft}
              errors={read && !read.ok ? read.errors : {}}
              onChange={setDraft}
              model={model}
              units={units}
              onUnitsChange={setUnits}
              loadTime={scenario?.loadTime ?? null}
              startingOutput={operatingPoint.output}
            />
          </Section>

          <Section
            title="Proposals"
            id="bench-proposals"
            aside={
              <div className="flex flex-wrap items-center gap-3">
                {rows ? (
                  <span className="text-xs text-ink-soft">
                    <span className="tabular">{rows.length}</span> proposals
                  </span>
                ) : null}
                <FormToggle value={gainForm} onChange={switchForm} />
              </div>
            }
          >
            {comparison?.error ? (
              <Notice tone="error" title="The proposals could not be computed">
                {comparison.error}
              </Notice>
            ) : rows ? (
              <>
                <p className="mb-2 text-xs text-ink-soft">
                  Margins of the sampled loop at the sample period; overshoot and settling after the set-point change, IAE and saturation over both
                  steps; “–” where a figure does not exist (no crossover, or no settling before the load step). Flagged{" "}
                  <span className="font-medium text-watch">! Risky</span> when Ms is above 2 or the phase margin under 30°. Click a header to sort,
                  a row to try it.
                </p>
                <p className="mb-2 text-xs font-medium text-ink-soft sm:hidden">Swipe the table sideways for the gains and figures.</p>
                <ProposalTable
                  rows={rows}
                  form={gainForm}
                  units={units}
                  selectedId={manual ? null : (selectedRow?.id ?? null)}
                  onSelect={(row) => {
                    setSelectedId(row.id);
                    setManual(null);
                  }}
                />
              </>
            ) : (
              <p className="text-sm text-ink-soft">{read && !read.ok ? "Correct the loop settings above to see proposals." : "Computing…"}</p>
            )}
          </Section>

          <Section
            title="Closed-loop response"
            id="bench-response"
            aside={
              <p className="text-xs text-ink-soft" data-testid="gains-origin">
                {manual ? "Gains edited by hand" : selectedRow ? `From ${selectedRow.ruleLabel} ${selectedRow.kind}` : ""}
              </p>
            }
          >
            {shownDraft ? (
              <div className="grid gap-5 lg:grid-cols-[17rem_minmax(0,1fr)]">
                <div className="space-y-4">
                  <div>
                    <div className="mb-2 flex items-center justify-between gap-2">
                      <h3 className="text-sm font-medium">Gains ({gainForm})</h3>
                      {manual && selectedRow ? (
                        <Button type="button" variant="quiet" className="text-xs" onClick={() => setManual(null)}>
                          Back to {selectedRow.ruleLabel} {selectedRow.kind}
                        </Button>
                      ) : null}
                    </div>
                    <GainEditor draft={shownDraft} errors={gainRead && !gainRead.ok ? gainRead.errors : {}} onChange={setManual} units={units} />
                  </div>
                  {response?.ok ? <ScoreList score={response.value.score} units={units} /> : null}
                </div>
                <div className="min-w-0">
                  {response?.ok ? (
                    <ResponseCharts response={response.value} units={units} limits={settings?.outputLimits ?? null} />
                  ) : response && !response.ok ? (
                    <Notice tone="error" title="This loop could not be simulated">
                      {response.message}
                    </Notice>
                  ) : (
                    <p className="text-sm text-ink-soft">{gainRead && !gainRead.ok ? "Correct the gains to see the response." : "Computing…"}</p>
                  )}
                </div>
                <div className="flex flex-wrap items-center gap-x-3 gap-y-1.5 border-t border-rule pt-3 lg:col-span-2">
                  <SaveDraft
                    templates={templates}
                    gains={gainRead?.ok ? gainRead.gains : null}
                    filterN={settings?.filterN ?? null}
                    origin={{
                      rule: manual ? null : (selectedRow?.rule ?? null),
                      controller: manual ? null : (selectedRow?.kind ?? null),
                      model,
                      score: response?.ok ? response.value.score : null,
                    }}
                  />
                </div>
              </div>
            ) : (
              <p className="text-sm text-ink-soft">Pick a proposal above, or correct the settings, to see the response.</p>
            )}
          </Section>
        </>
      ) : model ? null : (
        <p className="text-sm text-ink-soft">{test?.fit === "pending" ? "Waiting for the fit before tuning…" : "Pick a model to tune from."}</p>
      )}
      {model ? (
        <p className="text-xs text-ink-faint">
          Tuning from K <span className="tabular">{formatGain(model.gain)}</span> {units.value}/{units.output}, τ{" "}
          <span className="tabular">{formatGain(model.timeConstant)}</span> s, θ <span className="tabular">{formatGain(model.deadTime)}</span> s. The
          simulation starts at rest at the operating point and counts nothing the model leaves out: check proposals on the machine in a safe state.
        </p>
      ) : null}
    </div>
  );
}

function StepTestDropCompact({ onFile, busy }: { onFile: (file: File) => void; busy: boolean }) {
  return (
    <div className="w-full sm:w-auto">
      <StepTestDrop onFile={onFile} busy={busy} compact />
    </div>
  );
}
