import { Form, Link, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/study-planned-model";
import { PageHeader } from "~/components/page";
import { PlannedModelEditor } from "~/components/planned-model-editor";
import { CHECKS, defaultChecks } from "~/engine/checks";
import { listLockedVersions } from "~/.server/datasets/catalog.server";
import { withCategoricalHints } from "~/.server/datasets/categorical-hint";
import { actorOf } from "~/.server/people.server";
import {
  readPlannedModelForm,
  toForm,
  validatePlannedModel,
  type PlannedModelForm,
} from "~/.server/plans/planned-model";
import { getPlanVersion, PlanConflict, savePlannedModel } from "~/.server/plans/plans.server";
import { requireStudy } from "~/.server/study-access.server";

export function meta() {
  return [{ title: "Planned model · Plumbline" }];
}

/** The newest locked version of each dataset: its columns are what a plan can name. */
async function datasetChoices(studyId: string) {
  const locked = await listLockedVersions(studyId);
  const latest = new Map<string, (typeof locked)[number]>();
  for (const v of locked)
    if ((latest.get(v.datasetName)?.version ?? 0) < v.version) latest.set(v.datasetName, v);
  return [...latest.values()].map((v) => ({
    name: v.datasetName,
    version: v.version,
    rowCount: v.rowCount,
    columns: withCategoricalHints(v.columns),
  }));
}

function blankForm(): PlannedModelForm {
  return {
    key: "",
    title: "",
    datasetName: "",
    population: [],
    means: "equal",
    contrasts: "reference",
    multiplicity: "none",
    response: "",
    family: "gaussian",
    link: "",
    treatment: "",
    treatmentReference: "",
    covariates: [],
    interactions: [],
    weights: "",
    offset: "",
    id: "",
    checks: defaultChecks(true),
    sensitivity: [],
    published: [],
  };
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { study } = await requireStudy(request, params.studyId, "plan.author");
  const pv = await getPlanVersion(study.id, params.versionId);
  if (pv.version.status !== "draft") throw redirect(`/studies/${study.id}/plans/${pv.version.id}`);
  const existing = params.modelId === "new" ? null : pv.models.find((m) => m.id === params.modelId);
  if (params.modelId !== "new" && !existing)
    throw new Response("There is no such planned model in this version.", { status: 404 });
  return {
    studyId: study.id,
    code: study.code,
    versionId: pv.version.id,
    versionNumber: pv.version.version,
    planTitle: pv.version.title,
    revision: pv.version.revision,
    isNew: !existing,
    form: existing ? toForm(existing) : blankForm(),
    datasets: await datasetChoices(study.id),
    checkCatalogue: CHECKS.map((c) => ({
      key: c.key,
      models: c.models,
      label: c.label,
      rule: c.rule,
      source: c.source,
      defaultThreshold: c.defaultThreshold,
      defaultRemedy: c.defaultRemedy,
    })),
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { study, user } = await requireStudy(request, params.studyId, "plan.author");
  const formData = await request.formData();
  const revision = Number(formData.get("revision"));
  const form = readPlannedModelForm(formData);
  const pv = await getPlanVersion(study.id, params.versionId);
  const taken = pv.models.filter((m) => m.id !== params.modelId).map((m) => m.key);
  const result = validatePlannedModel(form, await datasetChoices(study.id), taken);
  if (!result.ok) return { errors: result.errors, form, conflict: null };
  try {
    await savePlannedModel(
      actorOf(user),
      study.id,
      pv.version.id,
      revision,
      params.modelId === "new" ? null : params.modelId,
      result.model,
    );
  } catch (e) {
    if (e instanceof PlanConflict) return { errors: {} as Record<string, string>, form, conflict: e.message };
    throw e;
  }
  return redirect(`/studies/${study.id}/plans/${pv.version.id}`);
}

export default function PlannedModelPage({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const form = actionData?.form ?? loaderData.form;
  const errors = actionData?.errors ?? {};
  const errorCount = Object.keys(errors).length;
  return (
    <>
      <PageHeader
        eyebrow={`${loaderData.planTitle} · version ${loaderData.versionNumber}`}
        title={loaderData.isNew ? "New planned model" : `Planned model ${form.key}`}
      >
        <Link to={`/studies/${loaderData.studyId}/plans/${loaderData.versionId}`}>Back to the plan</Link>
      </PageHeader>
      {actionData?.conflict ? (
        <p role="alert" className="mb-4 rounded-sm border border-finding bg-sheet p-3 text-sm text-finding">
          {actionData.conflict}
        </p>
      ) : null}
      {errorCount > 0 ? (
        <p role="alert" className="mb-4 rounded-sm border border-finding bg-sheet p-3 text-sm text-finding">
          The planned model was not saved:{" "}
          {errorCount === 1 ? "one field needs" : `${errorCount} fields need`} attention (marked below).
        </p>
      ) : null}
      {loaderData.datasets.length === 0 ? (
        <p className="panel p-4 text-sm">
          No dataset of this study is locked yet. A planned model reads a locked dataset, so a data manager
          must upload and lock one first.
        </p>
      ) : (
        <Form method="post" noValidate>
          <input type="hidden" name="revision" value={loaderData.revision} />
          <PlannedModelEditor
            key={JSON.stringify(form)}
            isNew={loaderData.isNew && !actionData}
            initial={form}
            errors={errors}
            datasets={loaderData.datasets}
            checkCatalogue={loaderData.checkCatalogue}
          />
          <div className="mt-6 flex gap-3">
            <button type="submit" className="btn" disabled={navigation.state === "submitting"}>
              {navigation.state === "submitting" ? "Saving…" : "Save planned model"}
            </button>
            <Link
              to={`/studies/${loaderData.studyId}/plans/${loaderData.versionId}`}
              className="btn-quiet no-underline hover:no-underline"
            >
              Cancel
            </Link>
          </div>
        </Form>
      )}
    </>
  );
}
