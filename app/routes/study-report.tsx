import { Link } from "react-router";
import { TreatmentEffectNote } from "~/components/treatment-effect";
import { CoxReportTables } from "~/components/cox-results";
import { RepeatedReportSections } from "~/components/repeated-report";
import { FitStatisticsTable } from "~/components/fit-statistics-table";
import type { Route } from "./+types/study-report";
import { ACTIONS, CATEGORIES, IMPACTS } from "~/shared/assessment-terms";
import { Caution } from "~/components/caution";
import { fmt, utc } from "~/shared/format";
import { PageHeader } from "~/components/page";
import {
  AdjustedMeansTable,
  CheckFormulaNote,
  checkTally,
  CoefficientTable,
  ContrastsTable,
  SensitivityTable,
} from "~/components/rerun-results";
import { ReproductionCard } from "~/components/reproduction-results";
import { StatusLabel } from "~/components/status";
import { CHECK_OUTCOME } from "~/shared/status-words";
import { TableScroll } from "~/components/table-scroll";
import { getReport } from "~/.server/reports/reports.server";
import { ReportFigures } from "~/components/figures/report-figures";
import { requireStudy } from "~/.server/study-access.server";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Report ${loaderData?.model.key ?? ""} · ${loaderData?.code ?? ""} · Plumbline` }];
}

/** A published report: read-only, for every role that may read reports (sponsor readers included). */
export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "report.view");
  const report = await getReport(study.id, params.rerunId);
  return { studyId: study.id, code: study.code, ...report };
}

const wordOf = <T extends Record<string, string>>(words: T, key: string): string =>
  key in words ? words[key as keyof T] : key;

function Assessment({
  a,
}: {
  a: { category: string; impact: string; action: string; rationale: string; by: string | null; at: string };
}) {
  return (
    <p className="text-sm">
      {wordOf(CATEGORIES, a.category)} · impact: {wordOf(IMPACTS, a.impact).toLowerCase()} · action:{" "}
      {wordOf(ACTIONS, a.action).toLowerCase()} — {a.rationale}{" "}
      <span className="text-xs text-ink-soft">
        ({a.by ?? "unknown"}, {utc(a.at)})
      </span>
    </p>
  );
}

export default function ReportPage({ loaderData }: Route.ComponentProps) {
  const {
    rerun,
    results,
    checks,
    findings,
    otherDeviations,
    comparison,
    signatures,
    appendix,
    studyId,
    reproduction,
  } = loaderData;
  const appendixUrl = `/studies/${studyId}/appendix/download?rerun=${rerun.primaryId}`;
  return (
    <>
      <PageHeader
        eyebrow={`${loaderData.code} · report${rerun.kind === "sensitivity" ? " · sensitivity analysis" : ""}`}
        title={`${loaderData.model.key} · ${loaderData.model.title}`}
      >
        <StatusLabel status="within" word="Signed and published" />
      </PageHeader>
      {rerun.kind === "sensitivity" ? (
        <p className="mb-4 text-sm">
          {rerun.label} ·{" "}
          <Link to={`/studies/${studyId}/reports/${rerun.primaryId}`}>the primary report</Link>
        </p>
      ) : null}

      <section className="panel mb-6 grid gap-x-6 gap-y-1 p-4 text-sm md:grid-cols-2" aria-label="Provenance">
        <p>
          <span className="font-semibold text-ink-soft">Dataset </span>
          {loaderData.dataset.name} v{loaderData.dataset.version} · SHA-256{" "}
          <span className="font-mono text-xs break-all">{loaderData.dataset.sha256}</span>
        </p>
        <p>
          <span className="font-semibold text-ink-soft">Plan </span>
          {loaderData.planVersion.title} v{loaderData.planVersion.version}
        </p>
        <p>
          <span className="font-semibold text-ink-soft">Engine </span>
          {rerun.engineVersion ?? "—"} · <span className="font-semibold text-ink-soft">Published </span>
          {utc(rerun.publishedAt)}
        </p>
        <p>
          <span className="font-semibold text-ink-soft">Result SHA-256 </span>
          <span className="font-mono text-xs break-all">{rerun.resultSha256 ?? "—"}</span>
        </p>
        <p className="md:col-span-2">
          <span className="font-semibold text-ink-soft">Appendix </span>
          {appendix ? (
            <>
              <a href={appendixUrl} download>
                Download the Word appendix
              </a>{" "}
              <span className="text-xs text-ink-soft">
                (exported {utc(appendix.exportedAt)} · SHA-256{" "}
                <span className="font-mono">{appendix.sha256.slice(0, 16)}…</span>)
              </span>
            </>
          ) : (
            "The appendix is not exported yet."
          )}
        </p>
      </section>

      <div className="space-y-6">
        <section aria-labelledby="rows-h">
          <h2 id="rows-h" className="mb-2">
            Analysis
          </h2>
          <p className="text-sm">{results.description}</p>
          <p className="num text-sm">
            {results.rows.inFile} rows in the file · {results.rows.outsidePopulation} outside the population ·{" "}
            {results.rows.excludedByOption} excluded by this analysis · {results.rows.missingCells} left out
            for missing cells · <span className="font-semibold">{results.rows.used} used</span>
          </p>
          {results.fitStatistics ? (
            <div className="mt-3 overflow-x-auto">
              <FitStatisticsTable rows={results.fitStatistics} />
            </div>
          ) : null}
        </section>
        {results.repeated ? <RepeatedReportSections part={results.repeated} /> : null}
        {results.contrasts.length > 0 ? (
          <section className="panel p-4" aria-labelledby="effect-h">
            <h2 id="effect-h" className="mb-2">
              Treatment effect
            </h2>
            <ContrastsTable
              rows={results.contrasts}
              kind={results.kind === "glm" ? "glm" : "linear"}
              plan={results.treatmentEffect ?? undefined}
            />
            {results.treatmentEffect ? <TreatmentEffectNote plan={results.treatmentEffect} /> : null}
            {results.adjustedMeans ? (
              <div className="mt-4">
                <AdjustedMeansTable rows={results.adjustedMeans} weighting={results.adjustedMeansWeighting} />
              </div>
            ) : null}
          </section>
        ) : null}
        {results.repeated ? null : (
          <section className="panel p-4" aria-labelledby="coef-h">
            <h2 id="coef-h" className="mb-2">
              Coefficients
            </h2>
            <CoefficientTable
              rows={results.coefficients}
              covarianceType={results.covarianceType}
              df={results.dfResidual ?? 0}
              statisticName={results.statisticName}
            />
          </section>
        )}
        {results.cox ? (
          <section className="panel p-4" aria-labelledby="hr-h">
            <h2 id="hr-h" className="mb-2">
              Hazard ratios and tests
            </h2>
            <CoxReportTables cox={results.cox} robust={results.cox.robust} />
          </section>
        ) : null}

        <section aria-labelledby="checks-h" className="space-y-3">
          <h2 id="checks-h">Checks of the plan</h2>
          <p className="text-sm text-ink-soft">
            {checkTally([...checks, ...(reproduction ? [{ outcome: reproduction.checkOutcome }] : [])])}.
            Subjects are named by rank only.
          </p>
          <div className="panel p-4">
            <TableScroll label="Checks of the plan">
              <table className="data-table">
                <caption className="mb-1 text-left text-xs text-ink-soft">
                  Each check the plan commits to, with its statistic, the threshold as applied and its
                  outcome.
                </caption>
                <thead>
                  <tr>
                    <th scope="col">Check</th>
                    <th scope="col">Outcome</th>
                    <th scope="col">Statistic</th>
                    <th scope="col">Threshold</th>
                    <th scope="col">Reading</th>
                    <th scope="col">Flagged (rank: value)</th>
                  </tr>
                </thead>
                <tbody>
                  {checks.map((c) => (
                    <tr key={c.key} className="align-top">
                      <th scope="row" className="text-left font-medium">
                        {c.label}
                      </th>
                      <td className="whitespace-nowrap">
                        <StatusLabel
                          status={CHECK_OUTCOME[c.outcome].status}
                          word={CHECK_OUTCOME[c.outcome].word}
                        />
                      </td>
                      <td className="num">{c.statistic}</td>
                      <td className="num whitespace-nowrap">{c.threshold}</td>
                      <td>
                        {c.summary}
                        {c.formula ? <CheckFormulaNote formula={c.formula} /> : null}
                        <span className="block text-xs text-ink-soft">Planned remedy: {c.remedy}</span>
                      </td>
                      <td className="num">
                        {c.flaggedCount > 0 ? (
                          <>
                            {c.flaggedCount} flagged
                            <span className="block text-xs text-ink-soft">
                              {c.flagged.map((f) => `${f.rank}: ${fmt(f.value)}`).join(" · ")}
                            </span>
                          </>
                        ) : (
                          "—"
                        )}
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </TableScroll>
          </div>
          {reproduction ? <ReproductionCard check={reproduction} /> : null}
        </section>

        {loaderData.figures.length > 0 ? (
          <section className="space-y-3" aria-labelledby="figures-h">
            <h2 id="figures-h">Diagnostic figures</h2>
            <p className="text-sm text-ink-soft">
              Influential subjects are shown by rank, never by identifier.
            </p>
            <ReportFigures figures={loaderData.figures} />
          </section>
        ) : null}

        <section className="space-y-3" aria-labelledby="findings-h">
          <h2 id="findings-h">Findings and their assessment</h2>
          {findings.length === 0 ? (
            <p className="text-sm text-ink-soft">Every check ended within plan.</p>
          ) : null}
          {findings.map((f) => (
            <article key={f.id} className="panel p-4">
              <p className="mb-1 font-medium">{f.summary}</p>
              {f.statistic ? (
                <p className="num mb-2 text-xs text-ink-soft">
                  {f.statistic} · threshold {f.threshold}
                </p>
              ) : null}
              {f.assessment ? (
                <Assessment a={f.assessment} />
              ) : (
                <p className="text-sm text-ink-soft">No assessment recorded.</p>
              )}
            </article>
          ))}
          {otherDeviations.length > 0 ? (
            <div className="panel p-4">
              <h3 className="mb-2 text-base font-semibold">Other deviations from the plan</h3>
              <ul className="space-y-2">
                {otherDeviations.map((d) => (
                  <li key={d.id}>
                    <Assessment a={d} />
                  </li>
                ))}
              </ul>
            </div>
          ) : null}
        </section>

        {comparison.length > 1 ? (
          <section className="panel p-4" aria-labelledby="sens-h">
            <h2 id="sens-h" className="mb-2">
              Sensitivity comparison
            </h2>
            <SensitivityTable analyses={comparison} />
          </section>
        ) : null}

        <section className="panel p-4" aria-labelledby="sign-h">
          <h2 id="sign-h" className="mb-2">
            Signatures
          </h2>
          {signatures.map((s) => (
            <p key={s.at} className="text-sm">
              <StatusLabel status="within" word="Signed" /> {s.name} · “{s.meaning}” · {utc(s.at)}
            </p>
          ))}
        </section>
      </div>
      <Caution className="mt-8" />
    </>
  );
}
