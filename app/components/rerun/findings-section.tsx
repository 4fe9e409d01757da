import { ACTIONS, CATEGORIES, IMPACTS } from "~/shared/assessment-terms";
import { utc } from "~/shared/format";
import { StatusLabel } from "../status";
import { AssessmentForm } from "./assessment-form";

export interface FindingView {
  id: string;
  summary: string;
  statistic: string | null;
  threshold: string | null;
  assessment: {
    category: keyof typeof CATEGORIES;
    impact: keyof typeof IMPACTS;
    action: string;
    rationale: string;
    by: string | null;
    at: string;
  } | null;
}

/** The primary rerun's findings with their assessments, and the forms to assess them or record a deviation. */
export function FindingsSection({
  findings,
  canAssess,
  errorsFor,
  busy,
}: {
  findings: readonly FindingView[];
  canAssess: boolean;
  errorsFor: (target: string) => Record<string, string>;
  busy: boolean;
}) {
  return (
    <section id="findings" className="mt-8 space-y-3" aria-labelledby="findings-h">
      <h2 id="findings-h">Findings and their assessment</h2>
      {findings.length === 0 ? (
        <p className="text-sm text-ink-soft">Every check ended within plan: there is nothing to assess.</p>
      ) : null}
      {findings.map((f) => (
        <article key={f.id} className="panel p-4">
          <div className="mb-2 flex flex-wrap items-baseline justify-between gap-2">
            <p className="font-medium">{f.summary}</p>
            {f.assessment ? (
              <StatusLabel status="within" word="Assessed" />
            ) : (
              <StatusLabel status="pending" word="Awaiting assessment" />
            )}
          </div>
          {f.statistic ? (
            <p className="num mb-2 text-xs text-ink-soft">
              {f.statistic} · threshold {f.threshold}
            </p>
          ) : null}
          {f.assessment ? (
            <p className="text-sm">
              {CATEGORIES[f.assessment.category]} · impact: {IMPACTS[f.assessment.impact].toLowerCase()} ·
              action: {ACTIONS[f.assessment.action as keyof typeof ACTIONS].toLowerCase()} —{" "}
              {f.assessment.rationale}{" "}
              <span className="text-xs text-ink-soft">
                ({f.assessment.by}, {utc(f.assessment.at)})
              </span>
            </p>
          ) : null}
          {canAssess ? (
            <details className="mt-2" open={!f.assessment}>
              <summary className="cursor-pointer text-sm text-accent-dark">
                {f.assessment ? "Change the assessment" : "Assess this finding"}
              </summary>
              <div className="mt-2">
                <AssessmentForm intent="assess" findingId={f.id} errors={errorsFor(f.id)} busy={busy} />
              </div>
            </details>
          ) : null}
        </article>
      ))}
      {canAssess ? (
        <details className="panel p-4">
          <summary className="cursor-pointer text-sm text-accent-dark">
            Record a deviation that no check produced
          </summary>
          <div className="mt-2">
            <AssessmentForm intent="deviation" errors={errorsFor("deviation")} busy={busy} />
          </div>
        </details>
      ) : null}
    </section>
  );
}
