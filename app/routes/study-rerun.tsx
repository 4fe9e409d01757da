import { useEffect } from "react";
import { Form, Link, redirect, useNavigation, useRevalidator } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/study-rerun";
import { CAUTION, Caution } from "~/components/caution";
import { figureUrl, RerunFigure } from "~/components/figures/rerun-figure";
import { FigureFramesReady, FigureWorkerStart } from "~/components/figures/figure-worker-start";
import { SensitivityForest, type ForestRow } from "~/components/figures/sensitivity-forest";
import { forestSpec } from "~/figures/forest";
import { toVega } from "~/.server/figures/compile.server";
import { WhatIfPanel, type WhatIfInputs } from "~/components/figures/what-if-panel";
import { utc } from "~/components/format";
import { FieldError, PageHeader } from "~/components/page";
import { AdjustedMeansTable, CalibrationTable, CheckCard, checkTally, CoefficientTable, ContrastsTable, MarginalMeansTable, RatioTable, SensitivityTable } from "~/components/rerun-results";
import { StatusLabel } from "~/components/status";
import { ReproductionCard } from "~/components/reproduction-results";
import { FitStatisticsTable } from "~/components/fit-statistics-table";
import { coxPageFigures, CoxResults } from "~/components/cox-results";
import { canonicalJson } from "~/.server/audit.server";
import { actorOf } from "~/.server/people.server";
import { exclusionProblem } from "~/.server/reruns/what-if.server";
import { keptWhatIfInputsOf } from "~/.server/reruns/what-if-inputs.server";
import { getPlannedModel } from "~/.server/plans/plans.server";
import { SENSITIVITY_KINDS, SENSITIVITY_LABELS } from "~/.server/plans/planned-model";
import { ACTIONS, CATEGORIES, IMPACTS } from "~/components/assessment-terms";
import { Assessment, assessFinding, canSign, FindingConflict, findingsOf, recordDeviation, signaturesOf, signRerun } from "~/.server/reruns/findings.server";
import type { FigureKey } from "~/engine/checks";
import { describeOptions, type RerunOptions } from "~/.server/reruns/rerun-options";
import { optionsFor } from "~/.server/reruns/planned-sensitivity";
import { reportedContrasts, rerunView } from "~/.server/reruns/rerun-view.server";
import { seesSubjects } from "~/.server/permissions.server";
import { redactionFor } from "~/.server/redaction.server";
import { getRerun, rerunDocumentOf, sameInputReruns, sensitivityReruns, startRerun } from "~/.server/reruns/reruns.server";
import { requireStudy } from "~/.server/study-access.server";
import { reauthenticationPath, reauthNotice, SIGNATURE_MEANINGS } from "~/.server/signatures.server";
import { ReauthNotice, SigningExplainer } from "~/components/signing";
import { populationNote } from "~/components/population-note";
import { TreatmentEffectNote } from "~/components/treatment-effect";

export function meta({ loaderData }: Route.MetaArgs) {
  return [{ title: `Rerun ${loaderData?.model.key ?? ""} · ${loaderData?.code ?? ""} · Plumbline` }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireStudy(request, params.studyId, "rerun.view");
  const { study, user, allowed } = access;
  const r = await getRerun(study.id, params.rerunId);
  const withIds = seesSubjects(access);
  const planned = await getPlannedModel(r.rerun.plannedModelId);
  const [findings, signatures, children, twins, verdict] = await Promise.all([
    findingsOf(r.rerun.id),
    signaturesOf(r.rerun.id),
    r.rerun.kind === "primary" ? sensitivityReruns(r.rerun.id) : Promise.resolve([]),
    sameInputReruns(r.rerun),
    allowed.has("rerun.sign") ? canSign(user, r.rerun.id) : Promise.resolve(null),
  ]);
  const childDocs = children.map((c) => ({ row: c, doc: rerunDocumentOf(c) }));
  const redact = await redactionFor(withIds, [{ doc: r.doc, datasetVersionId: r.rerun.datasetVersionId }, ...childDocs.map((c) => ({ doc: c.doc, datasetVersionId: c.row.datasetVersionId }))]);
  const comparison = r.doc
    ? [
        { id: r.rerun.id, label: "Primary analysis as planned", prespecified: true, primary: true, status: r.rerun.status, contrasts: reportedContrasts(r.doc) },
        ...childDocs.map(({ row, doc }) => ({ id: row.id, label: redact.text(row.label ?? "Sensitivity analysis"), prespecified: row.prespecified, primary: false, status: row.status, contrasts: doc ? reportedContrasts(doc) : [], failure: redact.maybe(row.failureReason) })),
      ]
    : [];
  // one forest chart per treatment contrast, compiled here so the browser needs only Vega's runtime
  const byContrast = new Map<string, ForestRow[]>();
  for (const a of comparison) for (const c of a.contrasts) byContrast.set(c.label, [...(byContrast.get(c.label) ?? []), { label: a.label, estimate: c.estimate, lower: c.lower, upper: c.upper, prespecified: a.prespecified, primary: a.primary }]);
  const forests = comparison.length > 1 ? [...byContrast].map(([label, rows]) => ({ label, rows, spec: toVega(forestSpec(rows, label, { width: "container" })) })) : [];
  const plannedSensitivity = planned.sensitivity.map((s) => {
    const options = optionsFor(s, r.doc);
    const label = options ? (s.kind === "alternative_covariates" ? `${s.label}: ${(s.covariates ?? []).join(", ")}` : options.variant === "cox_rmst" ? describeOptions(options) : SENSITIVITY_LABELS[s.kind]) : SENSITIVITY_LABELS[s.kind];
    // queued with the primary when it completed (reruns.server.ts); the newest run of these options shows its progress
    const child = options ? children.filter((c) => c.optionsJson === canonicalJson(options)).at(-1) : undefined;
    const note = options ? null : s.kind === "exclude_influential" ? "No subject was flagged, so there is nothing to exclude." : "Nothing to run for this analysis.";
    return { kind: s.kind, label, runnable: Boolean(options) && r.rerun.status === "completed" && !r.rerun.signedAt, done: Boolean(child), status: child?.status ?? null, childId: child?.id ?? null, note };
  });
  let whatIf: WhatIfInputs = { available: false, reason: "The what-if opens when the rerun has completed.", caution: CAUTION };
  if (r.doc && r.rerun.kind === "primary" && allowed.has("rerun.start") && !r.rerun.signedAt) {
    const doc = r.doc;
    whatIf = await keptWhatIfInputsOf(r.rerun, doc, {
      prespecifiedExclusion: planned.sensitivity.some((s) => s.kind === "exclude_influential"),
      withSubjectIds: withIds,
      canSave: true,
    });
  }
  const answer = {
    studyId: study.id,
    code: study.code,
    rerun: {
      id: r.rerun.id,
      kind: r.rerun.kind,
      label: redact.maybe(r.rerun.label),
      status: r.rerun.status,
      failureReason: redact.maybe(r.rerun.failureReason),
      datasetSha256: r.rerun.datasetSha256,
      resultSha256: r.rerun.resultSha256,
      engineVersion: r.rerun.engineVersion,
      createdAt: r.rerun.createdAt,
      finishedAt: r.rerun.finishedAt,
      signedAt: r.rerun.signedAt,
      prespecified: r.rerun.prespecified,
      parentRerunId: r.rerun.parentRerunId,
    },
    model: r.model,
    dataset: r.dataset,
    planVersion: r.planVersion,
    startedBy: r.startedBy,
    view: r.doc ? rerunView(r.doc, redact) : null,
    findings: findings.map((f) => ({ id: f.id, kind: f.kind, summary: redact.text(f.summary, f.checkKey), statistic: redact.maybe(f.statistic, f.checkKey), threshold: f.threshold, assessment: f.assessment ? { category: f.assessment.category, impact: f.assessment.impact, action: f.assessment.action, rationale: redact.text(f.assessment.rationale, f.checkKey), by: f.assessment.recordedByName, at: f.assessment.recordedAt } : null })),
    signatures: signatures.map((s) => ({ name: s.signerName, meaning: s.meaning, at: s.signedAt })),
    comparison,
    forests,
    plannedSensitivity,
    twins: twins.map((tw) => ({ id: tw.id, same: tw.resultSha256 === r.rerun.resultSha256, at: tw.createdAt })),
    can: {
      start: allowed.has("rerun.start") && !r.rerun.signedAt,
      assess: allowed.has("finding.assess") && !r.rerun.signedAt,
      sign: verdict,
    },
    signing: { meaning: SIGNATURE_MEANINGS.rerun, notice: reauthNotice(request) },
    whatIf,
  };
  // never kept by a cache: the security middleware answers every page with no-store
  return redact.assertClean(answer, "A results page");
}

const Intent = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("again") }),
  z.object({ intent: z.literal("sensitivity"), kind: z.enum(SENSITIVITY_KINDS) }),
  z.object({ intent: z.literal("assess"), findingId: z.string().min(1) }).passthrough(),
  z.object({ intent: z.literal("deviation") }).passthrough(),
  z.object({ intent: z.literal("sign") }),
  z.object({ intent: z.literal("whatif-save"), rows: z.string().regex(/^\d+(,\d+)*$/, "Choose at least one subject.") }),
]);

type ActionResult = { error: string | null; fieldErrors: Record<string, string>; target?: string };

export async function action({ request, params }: Route.ActionArgs): Promise<ActionResult | Response> {
  const form = Object.fromEntries(await request.formData());
  const parsed = Intent.safeParse(form);
  if (!parsed.success) return { error: parsed.error.issues[0]?.message ?? "That request was not understood.", fieldErrors: {} };
  const input = parsed.data;
  const needed = input.intent === "sign" ? "rerun.sign" : input.intent === "assess" || input.intent === "deviation" ? "finding.assess" : "rerun.start";
  const { study, user } = await requireStudy(request, params.studyId, needed);
  const actor = actorOf(user);
  const r = await getRerun(study.id, params.rerunId);
  const primaryId = r.rerun.parentRerunId ?? r.rerun.id;
  try {
    switch (input.intent) {
      case "again": {
        const options = JSON.parse(r.rerun.optionsJson) as RerunOptions;
        const id = await startRerun(actor, study.id, { plannedModelId: r.rerun.plannedModelId, datasetVersionId: r.rerun.datasetVersionId, options, parentRerunId: r.rerun.parentRerunId, prespecified: r.rerun.prespecified });
        return redirect(`/studies/${study.id}/reruns/${id}`);
      }
      case "sensitivity": {
        const planned = await getPlannedModel(r.rerun.plannedModelId);
        const s = planned.sensitivity.find((x) => x.kind === input.kind);
        const options = s ? optionsFor(s, r.doc) : null;
        if (!options) return { error: "That sensitivity analysis is not in the plan for this model, or there is nothing to run.", fieldErrors: {} };
        // queued with the primary when it completed: run again only one that failed
        const same = (await sensitivityReruns(primaryId)).filter((c) => c.optionsJson === canonicalJson(options) && c.status !== "failed");
        if (same.length > 0) return { error: "That sensitivity analysis has already run, or is running, for this rerun.", fieldErrors: {} };
        await startRerun(actor, study.id, { plannedModelId: r.rerun.plannedModelId, datasetVersionId: r.rerun.datasetVersionId, options, parentRerunId: primaryId, prespecified: true });
        return { error: null, fieldErrors: {} };
      }
      case "whatif-save": {
        const rows = input.rows.split(",").map(Number).sort((a, b) => a - b);
        const problem = r.doc ? exclusionProblem(r.doc, rows) : "The what-if opens when the rerun has completed.";
        if (problem) return { error: problem, fieldErrors: { rows: problem } };
        const planned = await getPlannedModel(r.rerun.plannedModelId);
        const flagged = (r.doc?.checks.find((c) => c.key === "cooks_distance")?.flagged ?? []).map((f) => f.row).sort((a, b) => a - b);
        const prespecified = planned.sensitivity.some((s) => s.kind === "exclude_influential") && JSON.stringify(rows) === JSON.stringify(flagged);
        await startRerun(actor, study.id, {
          plannedModelId: r.rerun.plannedModelId,
          datasetVersionId: r.rerun.datasetVersionId,
          options: { variant: "exclude_rows", rows, reason: prespecified ? "flagged by the Cook's distance check" : "chosen in the what-if, not pre-specified" },
          parentRerunId: primaryId,
          prespecified,
        });
        return { error: null, fieldErrors: {} };
      }
      case "assess":
      case "deviation": {
        const a = Assessment.safeParse(form);
        if (!a.success) {
          const fieldErrors: Record<string, string> = {};
          for (const i of a.error.issues) fieldErrors[String(i.path[0])] ??= i.message;
          return { error: null, fieldErrors, target: input.intent === "assess" ? input.findingId : "deviation" };
        }
        if (input.intent === "assess") await assessFinding(actor, study.id, input.findingId, a.data);
        else await recordDeviation(actor, study.id, r.rerun.id, a.data);
        return { error: null, fieldErrors: {} };
      }
      case "sign": {
        const verdict = await canSign(user, r.rerun.id);
        if (!verdict.ok && verdict.reauthenticate) {
          return redirect(reauthenticationPath(`/studies/${study.id}/reruns/${r.rerun.id}#sign-off`));
        }
        await signRerun({ ...actor, signedInAt: user.signedInAt }, study.id, r.rerun.id);
        return { error: null, fieldErrors: {} };
      }
    }
  } catch (e) {
    if (e instanceof FindingConflict) return { error: e.message, fieldErrors: {} };
    throw e;
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
