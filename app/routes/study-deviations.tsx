import { Form, Link } from "react-router";
import type { Route } from "./+types/study-deviations";
import { utc } from "~/shared/format";
import { EmptyState, PageHeader } from "~/components/page";
import { StatusLabel } from "~/components/status";
import { ACTIONS, CATEGORIES, IMPACTS } from "~/shared/assessment-terms";
import { deviationLog } from "~/.server/reruns/findings.server";
import { seesSubjects } from "~/.server/permissions.server";
import { redactionForReruns } from "~/.server/redaction.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Deviation log · ${loaderData?.code ?? "Study"} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireStudy(request, params.studyId, "deviation.view");
  const { study } = access;
  const url = new URL(request.url);
  const filter = {
    category: url.searchParams.get("category") || undefined,
    impact: url.searchParams.get("impact") || undefined,
    model: url.searchParams.get("model") || undefined,
  };
  const all = await deviationLog(study.id);
  const entries = await deviationLog(study.id, filter);
  const redact = await redactionForReruns(
    seesSubjects(access),
    entries.flatMap((d) => (d.rerun ? [d.rerun.id] : [])),
  );
  const answer = {
    studyId: study.id,
    code: study.code,
    filter,
    models: [...new Set(all.flatMap((d) => (d.model ? [d.model.key] : [])))].sort(),
    total: all.length,
    entries: entries.map((d) => ({
      id: d.id,
      category: CATEGORIES[d.category],
      impact: d.impact,
      impactLabel: IMPACTS[d.impact],
      action: ACTIONS[d.action as keyof typeof ACTIONS] ?? d.action,
      rationale: redact.text(d.rationale, d.finding?.checkKey),
      by: d.recordedByName,
      at: d.recordedAt,
      finding: d.finding
        ? {
            ...d.finding,
            summary: redact.text(d.finding.summary, d.finding.checkKey),
            statistic: redact.maybe(d.finding.statistic, d.finding.checkKey),
          }
        : null,
      rerun: d.rerun ? { ...d.rerun, label: redact.maybe(d.rerun.label) } : null,
      model: d.model,
    })),
  };
  return redact.assertClean(answer, "The deviation log");
}

export default function DeviationLog({ loaderData }: Route.ComponentProps) {
  const { entries, filter, models, studyId, code, total } = loaderData;
  return (
    <>
      <PageHeader eyebrow={code} title="Deviation log" />
      {total === 0 ? (
        <EmptyState title="No deviations recorded">
          <p>
            Every finding a biostatistician assesses, and every departure from the plan, is logged here with
            its impact on the treatment conclusion and the action taken.
          </p>
        </EmptyState>
      ) : (
        <>
          <Form
            method="get"
            className="mb-4 flex flex-wrap items-end gap-3"
            aria-label="Filter the deviation log"
          >
            <div>
              <label htmlFor="d-model" className="label">
                Planned model
              </label>
              <select id="d-model" name="model" defaultValue={filter.model ?? ""} className="field w-40">
                <option value="">Any</option>
                {models.map((m) => (
                  <option key={m}>{m}</option>
                ))}
              </select>
            </div>
            <div>
              <label htmlFor="d-category" className="label">
                Category
              </label>
              <select
                id="d-category"
                name="category"
                defaultValue={filter.category ?? ""}
                className="field w-48"
              >
                <option value="">Any</option>
                {Object.entries(CATEGORIES).map(([v, l]) => (
                  <option key={v} value={v}>
                    {l}
                  </option>
                ))}
              </select>
            </div>
            <div>
              <label htmlFor="d-impact" className="label">
                Impact
              </label>
              <select id="d-impact" name="impact" defaultValue={filter.impact ?? ""} className="field w-52">
                <option value="">Any</option>
                {Object.entries(IMPACTS).map(([v, l]) => (
                  <option key={v} value={v}>
                    {l}
                  </option>
                ))}
              </select>
            </div>
            <button type="submit" className="btn-quiet">
              Filter
            </button>
            <p className="num text-sm text-ink-soft">
              {entries.length} of {total} entries
            </p>
          </Form>
          <table className="data-table panel">
            <thead>
              <tr>
                <th scope="col">Model and check</th>
                <th scope="col">Category</th>
                <th scope="col">Impact</th>
                <th scope="col">Action</th>
                <th scope="col">Rationale</th>
                <th scope="col">Recorded</th>
              </tr>
            </thead>
            <tbody>
              {entries.map((d) => (
                <tr key={d.id}>
                  <td className="min-w-56">
                    {d.model ? (
                      <span className="font-medium">
                        {d.model.key} · {d.model.title}
                      </span>
                    ) : null}
                    <span className="block text-xs">
                      {d.finding ? d.finding.summary : "Deviation without a finding"}
                    </span>
                    {d.rerun ? (
                      <Link
                        to={`/studies/${studyId}/reruns/${d.rerun.id}${d.finding ? "#findings" : ""}`}
                        className="text-xs"
                      >
                        Open the rerun{d.rerun.signedAt ? " (signed)" : ""}
                      </Link>
                    ) : null}
                  </td>
                  <td>{d.category}</td>
                  <td>
                    <StatusLabel
                      status={
                        d.impact === "changes_conclusion"
                          ? "finding"
                          : d.impact === "minor"
                            ? "pending"
                            : "within"
                      }
                      word={d.impactLabel}
                    />
                  </td>
                  <td>{d.action}</td>
                  <td className="max-w-md text-sm">{d.rationale}</td>
                  <td className="text-xs whitespace-nowrap">
                    {d.by}
                    <span className="block num text-ink-soft">{utc(d.at)}</span>
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </>
      )}
    </>
  );
}
