/** API: a study's analysis plan versions and their planned models. */
import { getPlanVersion, listPlans, type PlanVersion } from "../plans/plans.server";
import { requireStudyForPrincipal } from "../study-access.server";
import type { Body, PlanVersionAnswer, PlanVersionsAnswer } from "./schemas";
import type { ApiPrincipal } from "./tokens.server";

type PlanVersionOut = Body<typeof PlanVersionsAnswer>["planVersions"][number];

function versionOut(
  v: PlanVersion,
  planName: string,
  author: string | null,
  approver: string | null,
): PlanVersionOut {
  return {
    id: v.id,
    planId: v.planId,
    planName,
    version: v.version,
    title: v.title,
    status: v.status,
    sapName: v.sapName,
    sapVersion: v.sapVersion,
    sapDate: v.sapDate,
    author,
    approvedBy: approver,
    approvedAt: v.approvedAt,
    createdAt: v.createdAt,
    updatedAt: v.updatedAt,
  };
}

export async function listPlanVersions(
  p: ApiPrincipal,
  studyId: string,
): Promise<Body<typeof PlanVersionsAnswer>> {
  const { study } = await requireStudyForPrincipal(p, studyId, "plan.view");
  const plans = await listPlans(study.id);
  const planVersions: PlanVersionOut[] = [];
  for (const plan of plans) {
    for (const v of plan.versions) {
      const { approverName } = await getPlanVersion(study.id, v.id);
      planVersions.push(versionOut(v, plan.name, v.authorName, approverName));
    }
  }
  return { planVersions };
}

export async function getPlanVersionWithModels(
  p: ApiPrincipal,
  studyId: string,
  versionId: string,
): Promise<Body<typeof PlanVersionAnswer>> {
  const { study } = await requireStudyForPrincipal(p, studyId, "plan.view");
  const pv = await getPlanVersion(study.id, versionId);
  return {
    planVersion: {
      ...versionOut(pv.version, pv.plan.name, pv.authorName, pv.approverName),
      editors: pv.editors,
    },
    plannedModels: pv.models.map((m) => ({
      id: m.id,
      key: m.key,
      title: m.title,
      datasetName: m.datasetName,
      spec: m.spec,
      checks: m.checks,
      sensitivity: m.sensitivity,
    })),
  };
}
