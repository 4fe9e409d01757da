import { Form, Link } from "react-router";
import type { ForestRow } from "../figures/sensitivity-forest";
import { SensitivityForest } from "../figures/sensitivity-forest";
import type { VegaSpecJson } from "../figures/vega-chart";
import { WhatIfPanel, type WhatIfInputs } from "../figures/what-if-panel";
import { SensitivityTable, type ComparedAnalysis } from "../rerun-results";
import { StatusLabel } from "../status";
import { RERUN_STATUS } from "~/shared/status-words";

export interface PlannedSensitivityView {
  kind: string;
  label: string;
  runnable: boolean;
  status: keyof typeof RERUN_STATUS | null;
  childId: string | null;
  note: string | null;
}

/** The plan's sensitivity analyses with their reruns, the comparison with its forest charts, and the what-if. */
export function SensitivitySection({
  studyId,
  planned,
  comparison,
  forests,
  whatIf,
  canStart,
  signed,
  running,
  busy,
}: {
  studyId: string;
  planned: readonly PlannedSensitivityView[];
  comparison: readonly ComparedAnalysis[];
  forests: readonly { label: string; rows: ForestRow[]; spec: VegaSpecJson }[];
  whatIf: WhatIfInputs;
  canStart: boolean;
  signed: boolean;
  running: boolean;
  busy: boolean;
}) {
  return (
    <section className="mt-8 space-y-3" aria-labelledby="sens-h">
      <h2 id="sens-h">Sensitivity analyses</h2>
      <div className="panel p-4">
        {planned.length > 0 ? (
          <p className="mb-2 text-xs text-ink-soft">
            The plan's sensitivity analyses run by themselves once the primary analysis has completed, each as
            a rerun of its own.
          </p>
        ) : null}
        <ul className="space-y-2 text-sm" aria-live="polite">
          {planned.map((s) => (
            <li key={s.kind} className="flex flex-wrap items-center justify-between gap-2">
              <span>
                {s.childId ? <Link to={`/studies/${studyId}/reruns/${s.childId}`}>{s.label}</Link> : s.label}{" "}
                <span className="text-xs text-ink-soft">(planned)</span>
                {s.note ? <span className="block text-xs text-ink-soft">{s.note}</span> : null}
              </span>
              {s.status && !(s.status === "failed" && canStart && s.runnable) ? (
                <StatusLabel status={RERUN_STATUS[s.status].status} word={RERUN_STATUS[s.status].word} />
              ) : running ? (
                <StatusLabel status="pending" word="Runs after the primary" />
              ) : canStart && s.runnable ? (
                <Form method="post">
                  <input type="hidden" name="intent" value="sensitivity" />
                  <input type="hidden" name="kind" value={s.kind} />
                  <button type="submit" className="btn-quiet" disabled={busy}>
                    Run it
                  </button>
                </Form>
              ) : null}
            </li>
          ))}
          {planned.length === 0 ? (
            <li className="text-ink-soft">The plan names no sensitivity analysis for this model.</li>
          ) : null}
        </ul>
      </div>
      {comparison.length > 1 ? (
        <div className="panel space-y-4 p-4">
          {forests.map((f) => (
            <SensitivityForest key={f.label} rows={f.rows} contrastLabel={f.label} spec={f.spec} />
          ))}
          <SensitivityTable analyses={comparison} hrefOf={(id) => `/studies/${studyId}/reruns/${id}`} />
        </div>
      ) : null}
      {canStart && !signed ? (
        <div className="panel p-4">
          <h3 className="mb-2 text-base font-semibold">What if the influential subjects were left out?</h3>
          <WhatIfPanel inputs={whatIf} />
        </div>
      ) : null}
    </section>
  );
}
