import { useEffect } from "react";
import { Form, Link, useNavigation, useRevalidator } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-rerun";
import { Caution } from "~/components/caution";
import { figureUrl, RerunFigure } from "~/components/figures/rerun-figure";
import { FigureFramesReady, FigureWorkerStart } from "~/components/figures/figure-worker-start";
import { SensitivityForest } from "~/components/figures/sensitivity-forest";
import { WhatIfPanel } from "~/components/figures/what-if-panel";
import { utc } from "~/components/format";
import { FieldError, PageHeader } from "~/components/page";
import { AdjustedMeansTable, CalibrationTable, CheckCard, checkTally, CoefficientTable, ContrastsTable, MarginalMeansTable, RatioTable, SensitivityTable } from "~/components/rerun-results";
import { StatusLabel } from "~/components/status";
import { ReproductionCard } from "~/components/reproduction-results";
import { FitStatisticsTable } from "~/components/fit-statistics-table";
import { coxPageFigures, CoxResults } from "~/components/cox-results";
import { SENSITIVITY_KINDS } from "~/.server/plans/planned-model";
import { resultsPage } from "~/.server/reruns/results-page.server";
import { recordAssessment, rerunAgain, runPlannedSensitivity, saveWhatIf, signResults, type ResultsActionResult } from "~/.server/reruns/results-actions.server";
import { ACTIONS, CATEGORIES, IMPACTS } from "~/components/assessment-terms";
import type { FigureKey } from "~/engine/checks";
import { requireStudy } from "~/.server/study-access.server";
import { ReauthNotice, SigningExplainer } from "~/components/signing";
import { populationNote } from "~/components/population-note";
import { TreatmentEffectNote } from "~/components/treatment-effect";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Rerun ${loaderData?.model.key ?? ""} · ${loaderData?.code ?? ""} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireStudy(request, params.studyId, "rerun.view");
  return resultsPage(request, access, params.rerunId);
}

const Intent = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("again") }),
  z.object({ intent: z.literal("sensitivity"), kind: z.enum(SENSITIVITY_KINDS) }),
  z.object({ intent: z.literal("assess"), findingId: z.string().min(1) }).passthrough(),
  z.object({ intent: z.literal("deviation") }).passthrough(),
  z.object({ intent: z.literal("sign") }),
  z.object({ intent: z.literal("whatif-save"), rows: z.string().regex(/^\d+(,\d+)*$/, "Choose at least one subject.") }),
]);

export async function action({ request, params }: Route.ActionArgs): Promise<ResultsActionResult | Response> {
  const form = Object.fromEntries(await request.formData());
  const parsed = Intent.safeParse(form);
  if (!parsed.success) return { error: parsed.error.issues[0]?.message ?? "That request was not understood.", fieldErrors: {} };
  const input = parsed.data;
  const needed = input.intent === "sign" ? "rerun.sign" : input.intent === "assess" || input.intent === "deviation" ? "finding.assess" : "rerun.start";
  const access = await requireStudy(request, params.studyId, needed);
  switch (input.intent) {
    case "again":
      return rerunAgain(access, params.rerunId);
    case "sensitivity":
      return runPlannedSensitivity(access, params.rerunId, input.kind);
    case "whatif-save":
      return saveWhatIf(access, params.rerunId, input.rows);
    case "assess":
      return recordAssessment(access, params.rerunId, form, input.findingId);
    case "deviation":
      return recordAssessment(access, params.rerunId, form);
    case "sign":
      return signResults(access, params.rerunId);
  }
}

const STATUS = {
  queued: { status: "pending", word: "Queued" },
  running: { status: "pending", word: "Running" },
  completed: { status: "within", word: "Completed" },
  failed: { status: "finding", word: "Failed" },
} as const;

function AssessmentForm({ intent, findingId, errors, busy }: { intent: "assess" | "deviation"; findingId?: string; errors: Record<string, string>; busy: boolean }) {
  const id = findingId ?? "deviation";
  return (
    <Form method="post" className="grid gap-2 md:grid-cols-3" preventScrollReset>
      <input type="hidden" name="intent" value={intent} />
      {findingId ? <input type="hidden" name="findingId" value={findingId} /> : null}
      {(
        [
          ["category", "Category", CATEGORIES],
          ["impact", "Impact on the treatment conclusion", IMPACTS],
          ["action", "Action taken", ACTIONS],
        ] as const
      ).map(([name, label, options]) => (
        <div key={name}>
          <label htmlFor={`${id}-${name}`} className="label">
            {label}
          </label>
          <select id={`${id}-${name}`} name={name} className="field" defaultValue="" aria-invalid={errors[name] ? true : undefined}>
            <option value="" disabled>
              Choose…
            </option>
            {Object.entries(options).map(([v, l]) => (
              <option key={v} value={v}>
                {l}
              </option>
            ))}
          </select>
          <FieldError id={`${id}-${name}-error`} message={errors[name]} />
        </div>
      ))}
      <div className="md:col-span-3">
        <label htmlFor={`${id}-rationale`} className="label">
          Rationale
        </label>
        <textarea id={`${id}-rationale`} name="rationale" rows={2} className="field" aria-invalid={errors.rationale ? true : undefined} />
        <FieldError id={`${id}-rationale-error`} message={errors.rationale} />
      </div>
      <div>
        <button type="submit" className="btn" disabled={busy}>
          {intent === "assess" ? "Record the assessment" : "Record the deviation"}
        </button>
      </div>
    </Form>
  );
}

type AnyView = NonNullable<Route.ComponentProps["loaderData"]["view"]>;

/** The results page's figure addresses in page order (keep in step with the figures below), for the figure worker to fetch early. */
function pageFigureUrls(view: AnyView, studyId: string, rerunId: string): string[] {
  if (view.kind === "cox") return [...new Set(coxPageFigures(view).map((f) => figureUrl(studyId, rerunId, f.figure, f.term)))];
  const figures: { figure: FigureKey; term?: string }[] = [
    ...view.checks.flatMap((c) => (c.figure ? [{ figure: c.figure, term: c.figureTerm }] : [])),
    ...view.continuousTerms.map((term) => ({ figure: "partial_residuals" as const, term })),
    ...(view.kind === "glm" && view.family === "binomial" ? [{ figure: "binned_residuals" as const }, { figure: "calibration" as const }] : []),
  ];
  return [...new Set(figures.map((f) => figureUrl(studyId, rerunId, f.figure, f.term)))];
}

export default function RerunPage({ loaderData, actionData }: Route.ComponentProps) {
  const { rerun, view, findings, can, studyId, comparison } = loaderData;
  const navigation = useNavigation();
  const revalidator = useRevalidator();
  const busy = navigation.state !== "idle";
  const running = rerun.status === "queued" || rerun.status === "running";
  // the planned sensitivity analyses run after the primary: keep polling while any of them is under way
  const sensitivityRunning = loaderData.plannedSensitivity.some((s) => s.status === "queued" || s.status === "running");
  useEffect(() => {
    if (!running && !sensitivityRunning) return;
    const timer = setInterval(() => {
      if (revalidator.state === "idle") void revalidator.revalidate();
    }, running ? 500 : 1000);
    return () => clearInterval(timer);
  }, [running, sensitivityRunning, revalidator]);
  const errorsFor = (target: string) => (actionData && "target" in actionData && actionData.target === target ? actionData.fieldErrors : {});
  const open = findings.filter((f) => !f.assessment).length;
  const status = STATUS[rerun.status];

  return (
    <>
      <PageHeader eyebrow={`${loaderData.code} · rerun${rerun.kind === "sensitivity" ? " · sensitivity analysis" : ""}`} title={`${loaderData.model.key} · ${loaderData.model.title}`}>
        <StatusLabel status={status.status} word={status.word} />
        {rerun.signedAt ? <StatusLabel status="within" word="Signed" /> : null}
      </PageHeader>
      {actionData && "error" in actionData && actionData.error ? (
        <p role="alert" className="mb-4 rounded-sm border border-finding bg-sheet p-3 text-sm text-finding">
          {actionData.error}
        </p>
      ) : null}
      {rerun.kind === "sensitivity" ? (
        <p className="mb-4 text-sm">
          {rerun.label}
          {rerun.prespecified ? "" : " · not pre-specified"} · <Link to={`/studies/${studyId}/reruns/${rerun.parentRerunId}`}>back to the primary rerun</Link>
        </p>
      ) : null}

      <section className="panel mb-6 grid gap-x-6 gap-y-1 p-4 text-sm md:grid-cols-2" aria-label="Provenance">
        <p>
          <span className="font-semibold text-ink-soft">Dataset </span>
          {loaderData.dataset.name} v{loaderData.dataset.version} · SHA-256 <span className="font-mono text-xs break-all">{rerun.datasetSha256}</span>
        </p>
        <p>
          <span className="font-semibold text-ink-soft">Plan </span>
          <Link to={`/studies/${studyId}/plans/${loaderData.planVersion.id}`}>
            {loaderData.planVersion.title} v{loaderData.planVersion.version}
          </Link>
        </p>
        <p>
          <span className="font-semibold text-ink-soft">Engine </span>
          {rerun.engineVersion ?? "—"} · <span className="font-semibold text-ink-soft">Started </span>
          {utc(rerun.createdAt)} by {loaderData.startedBy}
        </p>
        <p>
          <span className="font-semibold text-ink-soft">Result SHA-256 </span>
          <span className="font-mono text-xs break-all">{rerun.resultSha256 ?? "—"}</span>
        </p>
        {loaderData.twins.length > 0 ? (
          <p className="md:col-span-2">
            {loaderData.twins.map((tw) => (
              <span key={tw.id} className="mr-3 inline-flex items-center gap-1">
                <StatusLabel status={tw.same ? "within" : "finding"} word={tw.same ? "Same result hash" : "Different result hash"} />
                <Link to={`/studies/${studyId}/reruns/${tw.id}`} className="text-xs">
                  rerun of {utc(tw.at)}
                </Link>
              </span>
            ))}
          </p>
        ) : null}
        {can.start && rerun.status === "completed" ? (
          <Form method="post" className="md:col-span-2">
            <input type="hidden" name="intent" value="again" />
            <button type="submit" className="btn-quiet mt-2" disabled={busy}>
              Rerun again with the same inputs
            </button>
          </Form>
        ) : null}
      </section>

      {running ? (
        <section className="panel mb-6 p-6" aria-live="polite">
          <StatusLabel status="pending" word={rerun.status === "queued" ? "Waiting for the worker" : "Fitting the model and running the checks"} />
          <div className="mt-3 h-1.5 w-full overflow-hidden rounded-sm bg-rule">
            <div className="h-full w-1/3 animate-pulse bg-accent" />
          </div>
        </section>
      ) : null}

      {rerun.status === "failed" ? (
        <section className="panel mb-6 p-4">
          <StatusLabel status="finding" word="Not estimable as planned" />
          <p className="mt-2 text-sm">{rerun.failureReason}</p>
          <p className="mt-1 text-xs text-ink-soft">The rerun is kept as failed with this reason; assess the finding below and record the deviation.</p>
        </section>
      ) : null}

      {view?.kind === "cox" ? (
        <div className="space-y-6">
          <FigureWorkerStart figures={pageFigureUrls(view, studyId, rerun.id)} />
          <CoxResults view={view} studyId={studyId} rerunId={rerun.id} />
          <FigureFramesReady />
        </div>
      ) : view ? (
        <div className="space-y-6">
          <FigureWorkerStart figures={pageFigureUrls(view, studyId, rerun.id)} />
          <section aria-labelledby="rows-h">
            <h2 id="rows-h" className="mb-2">
              Rows and fit
            </h2>
            <p className="num text-sm">
              {view.rows.inFile} rows in the file · {view.rows.outsidePopulation} outside the population
              {populationNote(view.population)} · {view.rows.excludedByOption} excluded by this analysis ·{" "}
              {view.rows.missingCells} left out for missing cells · <span className="font-semibold">{view.rows.used} used</span> · {view.rank} coefficients estimated
            </p>
            <div className="mt-3 overflow-x-auto">
              <FitStatisticsTable rows={view.fitStatistics} />
            </div>
            {view.kind === "glm" && view.notes.length > 0 ? (
              <ul className="mt-2 list-disc pl-5 text-sm">
                {view.notes.map((n) => (
                  <li key={n}>{n}</li>
                ))}
              </ul>
            ) : null}
          </section>
          {view.contrasts.length > 0 ? (
            <section className="panel p-4" aria-labelledby="effect-h">
              <h2 id="effect-h" className="mb-2">
                Treatment effect
              </h2>
              <ContrastsTable rows={view.contrasts} kind={view.kind} plan={view.treatmentEffect} />
              <TreatmentEffectNote plan={view.treatmentEffect} />
              {view.kind === "linear" && view.adjustedMeans ? (
                <div className="mt-4">
                  <AdjustedMeansTable rows={view.adjustedMeans} weighting={view.adjustedMeansWeighting} />
                </div>
              ) : null}
              {view.kind === "glm" && view.marginalMeans ? (
                <div className="mt-4">
                  <MarginalMeansTable rows={view.marginalMeans} family={view.family} />
                </div>
              ) : null}
            </section>
          ) : null}
          <section className="panel p-4" aria-labelledby="coef-h">
            <h2 id="coef-h" className="mb-2">
              Coefficients
            </h2>
            <CoefficientTable rows={view.coefficients} covarianceType={view.covarianceType} df={view.dfResidual} statisticName={view.statisticName} />
            {view.kind === "glm" && view.ratios && view.ratioName ? (
              <div className="mt-4">
                <RatioTable rows={view.ratios} ratioName={view.ratioName} />
              </div>
            ) : null}
          </section>

          <section aria-labelledby="checks-h" className="space-y-3">
            <h2 id="checks-h">Checks of the plan</h2>
            <p className="text-sm text-ink-soft">
              {checkTally([...view.checks, ...(view.reproduction ? [{ outcome: view.reproduction.checkOutcome }] : [])])}
            </p>
            {view.reproduction ? <ReproductionCard check={view.reproduction} /> : null}
            {view.checks.map((c) => (
              <CheckCard key={c.key} check={c} figure={c.figure ? <RerunFigure studyId={studyId} rerunId={rerun.id} figure={c.figure} term={c.figureTerm} /> : undefined} />
            ))}
{view.continuousTerms.length > 0 ? (
            <article className="panel p-4">
              <h3 className="mb-2 text-base font-semibold">Partial residuals</h3>
              <p className="mb-2 text-xs text-ink-soft">Linearity of each continuous covariate's effect: the points should follow the straight line without a bend.</p>
              <div className="grid gap-4 lg:grid-cols-2">
                {view.continuousTerms.map((term) => (
                  <RerunFigure key={term} studyId={studyId} rerunId={rerun.id} figure="partial_residuals" term={term} />
                ))}
              </div>
            </article>
            ) : null}
          </section>

          {view.kind === "glm" && view.family === "binomial" ? (
            <section className="panel p-4" aria-labelledby="binomial-fit-h">
              <h2 id="binomial-fit-h" className="mb-2">
                Fit of the binomial model
              </h2>
              <p className="mb-2 text-xs text-ink-soft">
                Whether the predicted probabilities match what happened: the mean residual of subjects with similar fitted probabilities, and the observed against the predicted
                proportion in ten groups of equal size by predicted risk (the Hosmer–Lemeshow groups).
              </p>
              <div className="grid gap-4 lg:grid-cols-2">
                <RerunFigure studyId={studyId} rerunId={rerun.id} figure="binned_residuals" />
                <RerunFigure studyId={studyId} rerunId={rerun.id} figure="calibration" />
              </div>
              {view.calibrationGroups ? (
                <div className="mt-4 max-w-2xl overflow-x-auto">
                  <CalibrationTable groups={view.calibrationGroups} />
                </div>
              ) : null}
            </section>
          ) : null}
          {/* after the last figure frame: the worker started above draws them while the page's scripts load */}
          <FigureFramesReady />
        </div>
      ) : null}

      {rerun.kind === "primary" && (view || rerun.status === "failed") ? (
        <section id="findings" className="mt-8 space-y-3" aria-labelledby="findings-h">
          <h2 id="findings-h">Findings and their assessment</h2>
          {findings.length === 0 ? <p className="text-sm text-ink-soft">Every check ended within plan: there is nothing to assess.</p> : null}
          {findings.map((f) => (
            <article key={f.id} className="panel p-4">
              <div className="mb-2 flex flex-wrap items-baseline justify-between gap-2">
                <p className="font-medium">{f.summary}</p>
                {f.assessment ? <StatusLabel status="within" word="Assessed" /> : <StatusLabel status="pending" word="Awaiting assessment" />}
              </div>
              {f.statistic ? (
                <p className="num mb-2 text-xs text-ink-soft">
                  {f.statistic} · threshold {f.threshold}
                </p>
              ) : null}
              {f.assessment ? (
                <p className="text-sm">
                  {CATEGORIES[f.assessment.category]} · impact: {IMPACTS[f.assessment.impact].toLowerCase()} · action: {ACTIONS[f.assessment.action as keyof typeof ACTIONS].toLowerCase()} — {f.assessment.rationale}{" "}
                  <span className="text-xs text-ink-soft">
                    ({f.assessment.by}, {utc(f.assessment.at)})
                  </span>
                </p>
              ) : null}
              {can.assess ? (
                <details className="mt-2" open={!f.assessment}>
                  <summary className="cursor-pointer text-sm text-accent-dark">{f.assessment ? "Change the assessment" : "Assess this finding"}</summary>
                  <div className="mt-2">
                    <AssessmentForm intent="assess" findingId={f.id} errors={errorsFor(f.id)} busy={busy} />
                  </div>
                </details>
              ) : null}
            </article>
          ))}
          {can.assess ? (
            <details className="panel p-4">
              <summary className="cursor-pointer text-sm text-accent-dark">Record a deviation that no check produced</summary>
              <div className="mt-2">
                <AssessmentForm intent="deviation" errors={errorsFor("deviation")} busy={busy} />
              </div>
            </details>
          ) : null}
        </section>
      ) : null}

      {rerun.kind === "primary" && view ? (
        <section className="mt-8 space-y-3" aria-labelledby="sens-h">
          <h2 id="sens-h">Sensitivity analyses</h2>
          <div className="panel p-4">
            {loaderData.plannedSensitivity.length > 0 ? (
              <p className="mb-2 text-xs text-ink-soft">The plan's sensitivity analyses run by themselves once the primary analysis has completed, each as a rerun of its own.</p>
            ) : null}
            <ul className="space-y-2 text-sm" aria-live="polite">
              {loaderData.plannedSensitivity.map((s) => (
                <li key={s.kind} className="flex flex-wrap items-center justify-between gap-2">
                  <span>
                    {s.childId ? <Link to={`/studies/${studyId}/reruns/${s.childId}`}>{s.label}</Link> : s.label} <span className="text-xs text-ink-soft">(planned)</span>
                    {s.note ? <span className="block text-xs text-ink-soft">{s.note}</span> : null}
                  </span>
                  {s.status && !(s.status === "failed" && can.start && s.runnable) ? (
                    <StatusLabel status={STATUS[s.status].status} word={STATUS[s.status].word} />
                  ) : running ? (
                    <StatusLabel status="pending" word="Runs after the primary" />
                  ) : can.start && s.runnable ? (
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
              {loaderData.plannedSensitivity.length === 0 ? <li className="text-ink-soft">The plan names no sensitivity analysis for this model.</li> : null}
            </ul>
          </div>
          {comparison.length > 1 ? (
            <div className="panel space-y-4 p-4">
              {loaderData.forests.map((f) => (
                <SensitivityForest key={f.label} rows={f.rows} contrastLabel={f.label} spec={f.spec} />
              ))}
              <SensitivityTable analyses={comparison} hrefOf={(id) => `/studies/${studyId}/reruns/${id}`} />
            </div>
          ) : null}
          {can.start && !rerun.signedAt ? (
            <div className="panel p-4">
              <h3 className="mb-2 text-base font-semibold">What if the influential subjects were left out?</h3>
              <WhatIfPanel inputs={loaderData.whatIf} />
            </div>
          ) : null}
        </section>
      ) : null}

      {rerun.kind === "primary" && rerun.status !== "queued" && rerun.status !== "running" ? (
        <section id="sign-off" className="mt-8 panel p-4" aria-labelledby="sign-h">
          <h2 id="sign-h" className="mb-2">
            Sign-off
          </h2>
          {loaderData.signatures.length === 0 && !can.sign?.ok && !can.sign?.reauthenticate ? <ReauthNotice notice={loaderData.signing.notice} /> : null}
          {loaderData.signatures.length > 0 ? (
            loaderData.signatures.map((s) => (
              <p key={s.at} className="text-sm">
                <StatusLabel status="within" word="Signed" /> {s.name} · “{s.meaning}” · {utc(s.at)}. Published to the study's sponsor readers.
              </p>
            ))
          ) : can.sign ? (
            can.sign.ok || can.sign.reauthenticate ? (
              <Form method="post" className="space-y-2">
                <input type="hidden" name="intent" value="sign" />
                <ReauthNotice notice={loaderData.signing.notice} />
                <SigningExplainer act="Signing" meaning={loaderData.signing.meaning} fresh={can.sign.ok} />
                <p className="text-sm">Signing makes this rerun unchangeable and publishes it to the sponsor readers.</p>
                <button type="submit" className="btn" disabled={busy}>
                  Sign this rerun
                </button>
              </Form>
            ) : (
              <p className="text-sm">{can.sign.reason}</p>
            )
          ) : (
            <p className="text-sm text-ink-soft">{open > 0 ? `${open} findings await assessment.` : "Awaiting a biostatistician's signature."}</p>
          )}
        </section>
      ) : null}
      <Caution className="mt-8" />
    </>
  );
}
