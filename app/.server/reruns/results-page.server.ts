/**
 * A rerun's results page as one answer: the rerun and its provenance, the results view, findings
 * and signatures, the plan's sensitivity analyses with their reruns, the comparison and its forest
 * charts, and the what-if's inputs, every text through the viewer's redaction.
 */
import { CAUTION } from "~/shared/caution";
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import type { ForestRow } from "~/figures/forest";
import { forestSpec } from "~/figures/forest";
import { canonicalJson } from "../audit.server";
import { toVega } from "../figures/compile.server";
import { seesSubjects, type StudyAccess } from "../permissions.server";
import { getPlannedModel } from "../plans/plans.server";
import { redactionFor } from "../redaction.server";
import { reauthNotice, SIGNATURE_MEANINGS } from "../signatures.server";
import type { Study } from "../studies.server";
import { canSign, findingsOf, signaturesOf } from "./findings.server";
import { optionsFor, plansInfluentialExclusion, sensitivityLabel } from "./planned-sensitivity";
import { reportedContrasts, rerunView } from "./rerun-view.server";
import { getRerunPage, storedViewDocument } from "./rerun-rows.server";
import { sameInputReruns, sensitivityReruns } from "./reruns.server";
import { keptWhatIfInputsOf } from "./what-if-inputs.server";

export async function resultsPage(request: Request, access: StudyAccess & { study: Study }, rerunId: string) {
  const { study, user, allowed } = access;
  const r = await getRerunPage(study.id, rerunId);
  const withIds = seesSubjects(access);
  const planned = await getPlannedModel(r.rerun.plannedModelId);
  const [findings, signatures, children, twins, verdict] = await Promise.all([
    findingsOf(r.rerun.id),
    signaturesOf(r.rerun.id),
    r.rerun.kind === "primary" ? sensitivityReruns(r.rerun.id) : Promise.resolve([]),
    sameInputReruns(r.rerun),
    allowed.has("rerun.sign") ? canSign(user, r.rerun.id) : Promise.resolve(null),
  ]);
  const childDocs = await Promise.all(
    children.map(async (c) => ({ row: c, doc: await storedViewDocument(c) })),
  );
  const redact = await redactionFor(withIds, [
    { doc: r.doc, datasetVersionId: r.rerun.datasetVersionId },
    ...childDocs.map((c) => ({ doc: c.doc, datasetVersionId: c.row.datasetVersionId })),
  ]);
  const comparison = r.doc
    ? [
        {
          id: r.rerun.id,
          label: "Primary analysis as planned",
          prespecified: true,
          primary: true,
          status: r.rerun.status,
          contrasts: reportedContrasts(r.doc),
        },
        ...childDocs.map(({ row, doc }) => ({
          id: row.id,
          label: redact.text(row.label ?? "Sensitivity analysis"),
          prespecified: row.prespecified,
          primary: false,
          status: row.status,
          contrasts: doc ? reportedContrasts(doc) : [],
          failure: redact.maybe(row.failureReason),
        })),
      ]
    : [];
  // one forest chart per treatment contrast, compiled here so the browser needs only Vega's runtime
  const byContrast = new Map<string, ForestRow[]>();
  for (const a of comparison)
    for (const c of a.contrasts)
      byContrast.set(c.label, [
        ...(byContrast.get(c.label) ?? []),
        {
          label: a.label,
          estimate: c.estimate,
          lower: c.lower,
          upper: c.upper,
          prespecified: a.prespecified,
          primary: a.primary,
        },
      ]);
  const forests =
    comparison.length > 1
      ? [...byContrast].map(([label, rows]) => ({
          label,
          rows,
          spec: toVega(forestSpec(rows, label, { width: "container" })),
        }))
      : [];
  const plannedSensitivity = planned.sensitivity.map((s) => {
    const options = optionsFor(s, r.doc);
    // queued with the primary when it completed (reruns.server.ts); the newest run of these options shows its progress
    const child = options
      ? children.filter((c) => c.optionsJson === canonicalJson(options)).at(-1)
      : undefined;
    const note = options
      ? null
      : s.kind === "exclude_influential"
        ? "No subject was flagged, so there is nothing to exclude."
        : "Nothing to run for this analysis.";
    return {
      kind: s.kind,
      label: sensitivityLabel(s, options),
      runnable: Boolean(options) && r.rerun.status === "completed" && !r.rerun.signedAt,
      done: Boolean(child),
      status: child?.status ?? null,
      childId: child?.id ?? null,
      note,
    };
  });
  let whatIf: WhatIfInputs = {
    available: false,
    reason: "The what-if opens when the rerun has completed.",
    caution: CAUTION,
  };
  if (r.doc && r.rerun.kind === "primary" && allowed.has("rerun.start") && !r.rerun.signedAt) {
    whatIf = await keptWhatIfInputsOf(r.rerun, r.whatIf, {
      prespecifiedExclusion: plansInfluentialExclusion(planned),
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
    findings: findings.map((f) => ({
      id: f.id,
      kind: f.kind,
      summary: redact.text(f.summary, f.checkKey),
      statistic: redact.maybe(f.statistic, f.checkKey),
      threshold: f.threshold,
      assessment: f.assessment
        ? {
            category: f.assessment.category,
            impact: f.assessment.impact,
            action: f.assessment.action,
            rationale: redact.text(f.assessment.rationale, f.checkKey),
            by: f.assessment.recordedByName,
            at: f.assessment.recordedAt,
          }
        : null,
    })),
    signatures: signatures.map((s) => ({ name: s.signerName, meaning: s.meaning, at: s.signedAt })),
    comparison,
    forests,
    plannedSensitivity,
    twins: twins.map((tw) => ({
      id: tw.id,
      same: tw.resultSha256 === r.rerun.resultSha256,
      at: tw.createdAt,
    })),
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
