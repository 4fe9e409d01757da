/**
 * What the results page does, one function an intent: rerun again with the same inputs, run a
 * planned sensitivity analysis, save the what-if's exclusion as a rerun, assess a finding or
 * record a deviation, sign. Each answers the page's action result, or a redirect.
 */
import { redirect } from "react-router";
import type { StudyAccess } from "../permissions.server";
import { actorOf } from "../people.server";
import { getPlannedModel } from "../plans/plans.server";
import { canonicalJson } from "../audit.server";
import { reauthenticationPath } from "../signatures.server";
import type { Study } from "../studies.server";
import {
  Assessment,
  assessFinding,
  canSign,
  FindingConflict,
  recordDeviation,
  signRerun,
} from "./findings.server";
import { optionsFor, whatIfExclusion } from "./planned-sensitivity";
import type { RerunOptions } from "./rerun-options";
import { getRerun, sensitivityReruns, startRerun } from "./reruns.server";
import { exclusionProblem } from "./what-if.server";
import type { PlannedSensitivity } from "../plans/planned-model";

export type ResultsActionResult = {
  error: string | null;
  fieldErrors: Record<string, string>;
  target?: string;
};
type Access = StudyAccess & { study: Study };
type Answer = Promise<ResultsActionResult | Response>;
const DONE: ResultsActionResult = { error: null, fieldErrors: {} };

/** Starts the rerun again with the same inputs and goes to the new one. */
export async function rerunAgain({ study, user }: Access, rerunId: string): Answer {
  const r = await getRerun(study.id, rerunId);
  const options = JSON.parse(r.rerun.optionsJson) as RerunOptions;
  const id = await startRerun(actorOf(user), study.id, {
    plannedModelId: r.rerun.plannedModelId,
    datasetVersionId: r.rerun.datasetVersionId,
    options,
    parentRerunId: r.rerun.parentRerunId,
    prespecified: r.rerun.prespecified,
  });
  return redirect(`/studies/${study.id}/reruns/${id}`);
}

/** Runs one of the plan's sensitivity analyses; queued with the primary when it completed, so run again only one that failed. */
export async function runPlannedSensitivity(
  { study, user }: Access,
  rerunId: string,
  kind: PlannedSensitivity["kind"],
): Answer {
  const r = await getRerun(study.id, rerunId);
  const primaryId = r.rerun.parentRerunId ?? r.rerun.id;
  const planned = await getPlannedModel(r.rerun.plannedModelId);
  const s = planned.sensitivity.find((x) => x.kind === kind);
  const options = s ? optionsFor(s, r.doc) : null;
  if (!options)
    return {
      error: "That sensitivity analysis is not in the plan for this model, or there is nothing to run.",
      fieldErrors: {},
    };
  const same = (await sensitivityReruns(primaryId)).filter(
    (c) => c.optionsJson === canonicalJson(options) && c.status !== "failed",
  );
  if (same.length > 0)
    return {
      error: "That sensitivity analysis has already run, or is running, for this rerun.",
      fieldErrors: {},
    };
  await startRerun(actorOf(user), study.id, {
    plannedModelId: r.rerun.plannedModelId,
    datasetVersionId: r.rerun.datasetVersionId,
    options,
    parentRerunId: primaryId,
    prespecified: true,
  });
  return DONE;
}

/** Saves the what-if's exclusion (rows as the form sends them, "3,17") as a sensitivity rerun. */
export async function saveWhatIf({ study, user }: Access, rerunId: string, rowList: string): Answer {
  const r = await getRerun(study.id, rerunId);
  const rows = rowList
    .split(",")
    .map(Number)
    .sort((a, b) => a - b);
  const problem = r.doc ? exclusionProblem(r.doc, rows) : "The what-if opens when the rerun has completed.";
  if (problem) return { error: problem, fieldErrors: { rows: problem } };
  const planned = await getPlannedModel(r.rerun.plannedModelId);
  const { options, prespecified } = whatIfExclusion(planned, r.doc, rows);
  await startRerun(actorOf(user), study.id, {
    plannedModelId: r.rerun.plannedModelId,
    datasetVersionId: r.rerun.datasetVersionId,
    options,
    parentRerunId: r.rerun.parentRerunId ?? r.rerun.id,
    prespecified,
  });
  return DONE;
}

/** Records a finding's assessment (`findingId`) or a deviation no check produced (no `findingId`); field errors keyed to the form. */
export async function recordAssessment(
  { study, user }: Access,
  rerunId: string,
  form: Record<string, unknown>,
  findingId?: string,
): Answer {
  const r = await getRerun(study.id, rerunId);
  const a = Assessment.safeParse(form);
  if (!a.success) {
    const fieldErrors: Record<string, string> = {};
    for (const i of a.error.issues) fieldErrors[String(i.path[0])] ??= i.message;
    return { error: null, fieldErrors, target: findingId ?? "deviation" };
  }
  try {
    if (findingId !== undefined) await assessFinding(actorOf(user), study.id, findingId, a.data);
    else await recordDeviation(actorOf(user), study.id, r.rerun.id, a.data);
  } catch (e) {
    if (e instanceof FindingConflict) return { error: e.message, fieldErrors: {} };
    throw e;
  }
  return DONE;
}

/** Signs the rerun, or sends the signer to sign in again first. */
export async function signResults({ study, user }: Access, rerunId: string): Answer {
  const r = await getRerun(study.id, rerunId);
  const verdict = await canSign(user, r.rerun.id);
  if (!verdict.ok && verdict.reauthenticate)
    return redirect(reauthenticationPath(`/studies/${study.id}/reruns/${r.rerun.id}#sign-off`));
  try {
    await signRerun({ ...actorOf(user), signedInAt: user.signedInAt }, study.id, r.rerun.id);
  } catch (e) {
    if (e instanceof FindingConflict) return { error: e.message, fieldErrors: {} };
    throw e;
  }
  return DONE;
}
